"""The `rankscope` command: `check FILE` (terminal report or JSON, exit codes) and `serve`.

A thin shell: reads the file, builds the design, calls the core; no linear algebra here.
"""

from __future__ import annotations

import argparse
import io
import math
import re
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any, NoReturn, TextIO

from rankscope.report.checks import (
    EXIT_BAD_INPUT,
    EXIT_CROSSED,
    EXIT_OK,
    check_document,
    evaluate,
    json_text,
    parse_rule,
)
from rankscope.tables.errors import InputError

CHECK_HELP = """\
--fail-if rules (repeatable; exit code 1 when any is crossed, each crossing named on stderr):
  vif>N        the largest VIF exceeds N (a column in an exact dependency has VIF ∞)
  index>N      the largest condition index exceeds N (an exact dependency counts as ∞)
  cond>N       the condition number of the unit-length columns exceeds N (∞ when deficient)
  deficient    the design is rank deficient (some column is an exact combination of others)
  '>=' may stand for '>'. Quote rules in the shell: --fail-if 'vif>10'.
extras (--with, repeatable or comma-separated; computed only when asked, null in the JSON
otherwise):
  spearman     Spearman's rank correlations of the columns (ranks every row)
  order        the columns in a clustered display order (columns that move together)
  proportions  on a design of 200 columns or more: the proportions of every dimension
               (by default those of condition index 10 or more only; null for the others)
  spectra      on a design of 200 columns or more: the raw and centred singular values
               (by default their condition numbers come from the extreme values alone)
exit codes: 0 every rule holds, 1 a rule is crossed, 2 bad input (one line on stderr).
"""

#: What --with may ask for (rankscope.core.correlation.EXTRAS, spelled out here so that the
#: command's help and checks load without the core).
EXTRAS = ("spearman", "order", "proportions", "spectra")


class Parser(argparse.ArgumentParser):
    """argparse with one-line errors: usage mistakes are bad input like any other."""

    def error(self, message: str) -> NoReturn:
        raise InputError(message, "", f"See {self.prog} --help")


# ---------------------------------------------------------------- check


@dataclass
class Steps:
    """Recipe steps with, for each, what asked for it (an option, or the recipe file)."""

    steps: list[dict[str, Any]]
    origins: list[str]

    def add(self, step: dict[str, Any], origin: str) -> None:
        self.steps.append(step)
        self.origins.append(origin)

    def relabel(self, e: InputError) -> InputError:
        """Say which option or recipe-file step a 'recipe step N' error came from."""
        m = STEP_WHERE.match(e.where)
        if not m or not 1 <= int(m.group(1)) <= len(self.origins):
            return e
        rest = e.where[m.end():]
        return InputError(e.what, self.origins[int(m.group(1)) - 1] + rest, e.todo)


#: How the recipe code names a step in InputError.where ("recipe step 3 (drop), ...").
STEP_WHERE = re.compile(r"recipe step (\d+)(?: \([a-z_]+\))?")


def recipe_steps(args: argparse.Namespace, kinds: dict[str, str]) -> Steps:
    """The recipe file's steps, then the steps the options ask for, in a fixed order."""
    out = Steps([], [])
    if args.recipe:
        from rankscope.design.recipe import Recipe

        try:
            text = Path(args.recipe).read_text(encoding="utf-8")
        except UnicodeDecodeError as e:
            raise InputError("the recipe is not UTF-8 text", args.recipe,
                             "Save it as UTF-8 JSON") from e
        try:
            steps = Recipe.from_json(text).steps
        except InputError as e:
            where = f"{args.recipe}, {e.where}" if e.where else args.recipe
            raise InputError(e.what, where, e.todo) from e
        for i, step in enumerate(steps, start=1):
            out.add(step, f"{args.recipe}, step {i} ({step['step']})")
    if args.response:
        out.add({"step": "response", "column": args.response}, f"--response {args.response}")
    if args.no_intercept:
        out.add({"step": "intercept", "include": False}, "--no-intercept")
    recipe_kinds = {s["column"] for s in out.steps if s["step"] == "kind"}
    coded = list(dict.fromkeys(args.categorical))
    if args.all_levels:
        # Every categorical column gets all its levels, not only the ones named here.
        coded += [c for c, k in kinds.items()
                  if k == "categorical" and c not in coded and c not in recipe_kinds]
    for col in coded:
        origin = f"--categorical {col}" if col in args.categorical else "--all-levels"
        if kinds.get(col) != "categorical" and col in args.categorical:
            out.add({"step": "kind", "column": col, "to": "categorical"}, origin)
        step: dict[str, Any] = {"step": "indicators", "column": col}
        if args.all_levels:
            step["reference"] = "all"
        out.add(step, origin)
    for c in dict.fromkeys(args.drop):
        out.add({"step": "drop", "column": c}, f"--drop {c}")
    return out


def check_names(args: argparse.Namespace, columns: list[str]) -> None:
    """Name the option when it names a column the file lacks (without a recipe, whose
    steps may make new columns, the file's columns are all there is)."""
    from rankscope.design.names import quoted, suggestion

    named = [("--response", args.response)] if args.response else []
    named += [("--categorical", c) for c in args.categorical]
    named += [("--drop", c) for c in args.drop]
    for option, name in named:
        if name not in columns:
            raise InputError(f"the file has no column named {quoted(name)}", option,
                             suggestion(name, columns))


def read(args: argparse.Namespace):
    """The table, with reading failures turned into InputError."""
    from rankscope.tables.read import read_table

    path = args.file
    try:
        return read_table(path, sheet=args.sheet)
    except InputError:
        raise
    except FileNotFoundError as e:
        raise InputError("the file does not exist", path, "Check the path") from e
    except IsADirectoryError as e:
        raise InputError("this is a folder, not a file", path, "Give a file") from e
    except OSError as e:
        raise InputError(f"the file cannot be read ({e.strerror or e})", path,
                         "Check the path and its permissions") from e
    except ValueError as e:  # includes UnicodeDecodeError
        raise InputError(f"the file could not be read as a table ({e})", path,
                         "Check that it is a CSV, TSV, Excel or Parquet file") from e


def check_formula_options(args: argparse.Namespace) -> None:
    """With --formula the formula names the response; --response may only repeat it."""
    lhs, tilde, _ = args.formula.partition("~")
    if args.response and (not tilde or lhs.strip().strip("`") != args.response):
        raise InputError("--formula names the response left of ~", "--response",
                         f"Write the formula as '{args.response} ~ ...' and leave out "
                         "--response")
    if args.all_levels:
        raise InputError("--all-levels codes the table's categorical columns; with --formula "
                         "the formula codes them", "--all-levels",
                         "Write C(column) or leave out the intercept (0 + C(column)) in the "
                         "formula")
    args.response = None  # the formula's own response step sets it


def _checked_options(args: argparse.Namespace) -> list:
    """The --fail-if rules, after refusing a senseless --tol and reading --with into
    args.extras (all before any reading)."""
    rules = [parse_rule(t) for t in args.fail_if]
    if args.tol is not None and not (math.isfinite(args.tol) and args.tol > 0):
        raise InputError(f"the tolerance must be a positive number, not {args.tol}", "--tol")
    args.extras = extras_asked(getattr(args, "with_", None) or [])
    return rules


def extras_asked(given: list[str]) -> list[str]:
    """The extras named by --with (each value may list several, comma-separated), in
    EXTRAS order; refuses a name it does not know."""
    asked = {e.strip().lower() for value in given for e in value.split(",") if e.strip()}
    for name in sorted(asked - set(EXTRAS)):
        raise InputError(f"there is no extra named {name!r}", "--with",
                         "Ask for " + " or ".join(EXTRAS) + ", e.g. --with spearman")
    return [e for e in EXTRAS if e in asked]


def _check_keep(args: argparse.Namespace, columns: list[str]) -> None:
    from rankscope.design.names import quoted, suggestion

    for name in args.keep:
        if name not in columns:
            raise InputError(f"the design has no column named {quoted(name)}", "--keep",
                             suggestion(name, columns))


def _write_check(args: argparse.Namespace, rules: list, diagnosis: dict, design: Any,
                 source: str, notes: list[str], out: TextIO, err: TextIO,
                 extra: dict[str, Any] | None = None) -> int:
    """The report (text, or JSON with `extra` fields last), each crossed rule on err, and the
    exit code."""
    checks = evaluate(rules, diagnosis)
    if args.json:
        doc = check_document(diagnosis, design, source, notes, checks, args.extras)
        doc.update(extra or {})
        # ASCII-only JSON (\u escapes) survives any terminal encoding unchanged.
        out.write(json_text(doc))
    else:
        from rankscope.report.text import render_text

        out.write(render_text(diagnosis, design, source=source, notes=notes))
    crossed = [c for c in checks if c["crossed"]]
    for c in crossed:
        print(f"rankscope: --fail-if {c['rule']} crossed: {c['detail']}", file=err)
    return EXIT_CROSSED if crossed else EXIT_OK


def run_check(args: argparse.Namespace) -> int:
    if getattr(args, "stream", False):
        if getattr(args, "formula", None) is not None:
            raise InputError("--stream reads the file's columns block by block; a formula "
                             "needs the whole table", "--formula",
                             "Leave out --stream, or use --response with recipe steps")
        return stream_check(args)
    rules = _checked_options(args)
    table = read(args)
    if args.formula is not None:
        check_formula_options(args)
    elif not args.recipe:
        check_names(args, table.columns)
    from rankscope.core.diagnosis import diagnose_factor
    from rankscope.core.factor import factorize
    from rankscope.design.recipe import Recipe, build_design
    from rankscope.report.remedies import remedies_of

    steps = recipe_steps(args, dict(table.kinds) if args.formula is None else {})
    try:
        if args.formula is not None:
            from rankscope.design.formula import formula_design

            design = formula_design(table, args.formula, steps.steps)
        else:
            design = build_design(table, Recipe(steps.steps))
    except InputError as e:
        raise steps.relabel(e) from e
    _check_keep(args, design.columns)
    F = _factor(design, factorize)
    keep = list(args.keep) or None
    found = diagnose_factor(F, response=design.response, groups=design.groups, keep=keep,
                            tol=args.tol, influence=args.influence,
                            rank_correlation="spearman" in args.extras,
                            order="order" in args.extras,
                            all_proportions="proportions" in args.extras,
                            spectra="spectra" in args.extras)
    diagnosis = fields_of(found)
    remedies_of(found, F, design, steps.steps, keep, args.tol).into(diagnosis)
    return _write_check(args, rules, diagnosis, design, table.source, table.notes,
                        sys.stdout, sys.stderr)


def _factor(design: Any, factorize: Any) -> Any:
    """factorize(design) on one BLAS thread.

    The blocked reduction makes many small BLAS calls (2 MiB blocks, panels of 16 to 64
    columns): a second thread gains little there, and on a busy 2-core machine its start and
    waits cost 10-30× (measured in one process, threadpoolctl: 200,000 × 100 in 0.48 s on
    one thread against 5-16 s on two; 20,000 × 1,000 in 1.7-2.7 s against 32-35 s; 10,000 ×
    20 in 6 ms against up to 150 ms).
    """
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        return factorize(design.X, design.columns, design.y)


def stream_check(args: argparse.Namespace, *, out: TextIO | None = None,
                 err: TextIO | None = None) -> int:
    """`rankscope check FILE --stream`: run_check's output and exit codes, the file read block
    by block with a progress bar on stderr."""
    from rankscope.core.diagnosis import diagnose_factor
    from rankscope.design.recipe import Recipe
    from rankscope.scale.stream import stream_source
    from rankscope.scale.stream_bar import ProgressBar
    from rankscope.scale.stream_source import open_source

    out = out or sys.stdout
    err = err or sys.stderr
    rules = _checked_options(args)
    if "spearman" in args.extras:
        raise InputError("--stream keeps no rows, and Spearman's correlations rank them",
                         "--with spearman", "Leave out --stream, or leave out spearman")
    if getattr(args, "sheet", None):
        raise InputError("--stream reads CSV/TSV and Parquet files, which have no sheets",
                         "--sheet", "Leave out --sheet, or leave out --stream for a workbook")
    source = open_source(args.file)
    if not args.recipe:
        check_names(args, source.columns)
    steps = recipe_steps(args, dict(source.kinds))
    bar = ProgressBar(err)
    try:
        F, info = stream_source(source, Recipe(steps.steps), progress=bar)
    except InputError as e:
        raise steps.relabel(e) from e
    finally:
        bar.close()
    _check_keep(args, info.columns)
    from rankscope.report.remedies import remedies_of

    keep = list(args.keep) or None
    found = diagnose_factor(F, response=info.response, groups=info.groups, keep=keep,
                            tol=args.tol, rank_correlation=False,
                            order="order" in args.extras,
                            all_proportions="proportions" in args.extras,
                            spectra="spectra" in args.extras)
    diagnosis = fields_of(found)
    remedies_of(found, F, info.design(), steps.steps, keep, args.tol).into(diagnosis)
    stream = {"passes": info.passes, "blocks": info.blocks, "bytes": info.bytes_total,
              "seconds": round(info.seconds, 3)}
    return _write_check(args, rules, diagnosis, info.design(), info.source, info.table_notes,
                        out, err, {"stream": stream})


def fields_of(found: Any) -> dict[str, Any]:
    """The Diagnosis's fields as a dict that shares their values: the command only reads
    them, so the deep copy of to_dict (seconds at 1,000 columns) buys nothing here."""
    from dataclasses import fields

    return {f.name: getattr(found, f.name) for f in fields(found)}


def serve_limits(args: argparse.Namespace) -> Any:
    """The Limits of `rankscope serve` from the limit flags given (None: none given, so the
    defaults hold); 0 turns a row, column or time limit off. Refuses senseless values."""
    from dataclasses import replace

    from rankscope.web.access.limits import MB, Limits

    given = {flag: value for flag, value in (
        ("--max-upload-mb", args.max_upload_mb), ("--max-rows", args.max_rows),
        ("--max-columns", args.max_columns), ("--time-budget", args.time_budget),
    ) if value is not None}
    if not given:
        return None
    for flag, value in given.items():
        if not math.isfinite(value) or value < 0 or (flag == "--max-upload-mb" and value == 0):
            raise InputError(f"{flag} must be a positive number, not {value:g}", "",
                             "Give a positive number (0 turns the row, column and time limits "
                             "off)")
    limits = Limits()
    fields = {"--max-upload-mb": ("max_upload_bytes", lambda v: int(v * MB)),
              "--max-rows": ("max_rows", lambda v: v or None),
              "--max-columns": ("max_columns", lambda v: v or None),
              "--time-budget": ("analysis_seconds", lambda v: v or None)}
    return replace(limits, **{fields[f][0]: fields[f][1](v) for f, v in given.items()})


def table_memory(mb: float) -> int:
    """The bytes of --table-memory-mb; refuses senseless values."""
    if not math.isfinite(mb) or mb <= 0:
        raise InputError(f"--table-memory-mb must be a positive number, not {mb:g}", "",
                         "Give the megabytes of tables to hold in memory, e.g. 2000")
    return int(mb * 1_000_000)


def run_serve(args: argparse.Namespace) -> int:
    if args.engine == "dask":
        if args.file is None or not Path(args.file).is_dir():
            raise InputError("the Dask engine serves a folder of Parquet files",
                             args.file or "", "Give the dataset's folder")
        if not args.response:
            raise InputError("the Dask engine needs a response column", "",
                             "Name it with --response COL")
    elif args.scheduler is not None:
        raise InputError("--scheduler is for the Dask engine", "", "Add --engine dask")
    elif args.engine == "stream":
        if args.file is None or not Path(args.file).is_file():
            raise InputError("the stream engine serves one CSV/TSV (.gz) or Parquet file",
                             args.file or "", "Give the file's path")
        if not args.response:
            raise InputError("the stream engine needs a response column", "",
                             "Name it with --response COL")
    elif args.file is not None and not Path(args.file).is_file():
        raise InputError("the file does not exist", args.file, "Check the path")
    from rankscope.web.server import run  # the web stack loads only when serving

    # --share alone opens the server to the local network; an explicit --host still wins
    # (tests share on 127.0.0.1).
    host = args.host or ("0.0.0.0" if args.share else "127.0.0.1")
    # Only what was asked for is passed on: run() has its own defaults (~/.rankscope).
    extra: dict[str, Any] = {}
    if args.data_dir is not None:
        extra["data_dir"] = args.data_dir
    if args.share:
        extra["share"] = True
    if args.engine == "dask":
        extra.update(engine="dask", scheduler=args.scheduler, response=args.response)
    elif args.engine == "stream":
        extra.update(engine="stream", response=args.response)
    limits = serve_limits(args)
    if limits is not None:
        extra["limits"] = limits
    if args.host_name:
        extra["host_names"] = list(args.host_name)
    if args.table_memory_mb is not None:
        extra["table_memory"] = table_memory(args.table_memory_mb)
    run(args.file, host=host, port=args.port, open_browser=not args.no_browser, **extra)
    return EXIT_OK


def build_parser() -> Parser:
    parser = Parser(prog="rankscope", description=(
        "Name the exact linear dependencies among the columns of a linear model's design, "
        "measure near-collinearity and fit stably."))
    sub = parser.add_subparsers(dest="command", required=True, parser_class=Parser)

    check = sub.add_parser(
        "check", help="diagnose a table and print a report (or JSON)",
        description="Diagnose the design built from FILE and print a report.",
        epilog=CHECK_HELP, formatter_class=argparse.RawDescriptionHelpFormatter)
    check.add_argument("file", metavar="FILE", help="CSV, TSV, Excel or Parquet file")
    check.add_argument("--response", metavar="COL", help="the response column (y)")
    check.add_argument("--formula", metavar="FORMULA",
                       help="build the design from a formula such as 'y ~ a + C(g) + a:b' "
                            "(see docs/python-api.md); the options below then act on its "
                            "columns")
    check.add_argument("--drop", metavar="COL", action="append", default=[],
                       help="leave a column out of the predictors (repeatable)")
    check.add_argument("--categorical", metavar="COL", action="append", default=[],
                       help="code a column as 0/1 indicators, one level left out (repeatable)")
    check.add_argument("--all-levels", action="store_true",
                       help="give every level of each categorical column its own indicator")
    check.add_argument("--no-intercept", action="store_true", help="leave out the constant")
    check.add_argument("--keep", metavar="COL", action="append", default=[],
                       help="keep this design column in the basis when columns are exactly "
                            "dependent; the first named has the highest priority (repeatable)")
    check.add_argument("--recipe", metavar="FILE",
                       help="a recipe JSON file; its steps run before the options above")
    check.add_argument("--sheet", metavar="NAME", help="the sheet to read from an Excel file")
    check.add_argument("--tol", metavar="FLOAT", type=float,
                       help="absolute rank tolerance on the singular values of the unit-length "
                            "columns (default: σ_max·max(n, p)·eps)")
    check.add_argument("--json", action="store_true", help="print the diagnosis as JSON")
    check.add_argument("--with", metavar="EXTRA", dest="with_", action="append", default=[],
                       help="also compute an extra: spearman, order, proportions, spectra "
                            "(repeatable or "
                            "comma-separated; see below)")
    check.add_argument("--influence", action="store_true",
                       help="also find the rows behind the condition number and each flagged "
                            "near-dependency (exact leave-one-out, one more pass over the rows)")
    check.add_argument("--stream", action="store_true",
                       help="read FILE block by block (CSV/TSV, .gz or Parquet larger than "
                            "memory); progress on stderr")
    check.add_argument("--fail-if", metavar="RULE", action="append", default=[],
                       help="exit with code 1 when RULE is crossed (see below; repeatable)")
    check.set_defaults(run=run_check)

    serve = sub.add_parser("serve", help="open the local web app",
                           description="Start the local web app, optionally with FILE loaded "
                                       "as a new session. Sessions are kept between runs.")
    serve.add_argument("file", metavar="FILE", nargs="?", help="a table to open at start")
    serve.add_argument("--host", default=None,
                       help="address to listen on (default 127.0.0.1, or 0.0.0.0 with --share)")
    serve.add_argument("--port", type=int, default=8000, help="port to listen on")
    serve.add_argument("--host-name", metavar="NAME", action="append", default=[],
                       help="another name this server may be reached by (e.g. the computer's "
                       "name on the network); requests naming any other host are refused")
    serve.add_argument("--no-browser", action="store_true", help="do not open a browser")
    serve.add_argument("--data-dir", metavar="DIR", default=None,
                       help="folder that keeps the sessions (default ~/.rankscope, or "
                            "$RANKSCOPE_HOME)")
    serve.add_argument("--table-memory-mb", metavar="MB", type=float, default=None,
                       help="how many MB of uploaded tables to hold in memory between "
                            "requests, one copy per content whatever its file name; the "
                            "least recently used go first, and the table in use is held "
                            "whatever its size (default: an eighth of this computer's "
                            "memory)")
    serve.add_argument("--share", action="store_true",
                       help="listen on the local network and print share links; every "
                            "request then needs a link's key")
    serve.add_argument("--engine", choices=("memory", "dask", "stream"), default="memory",
                       help="dask: FILE is a folder of Parquet files, reduced once on a Dask "
                            "cluster; stream: FILE is read block by block with a progress "
                            "page and a Cancel button; either way the session analyses the "
                            "reduced factor (needs --response)")
    serve.add_argument("--scheduler", metavar="ADDRESS", default=None,
                       help="the Dask scheduler's address (default: a local cluster on "
                            "this computer)")
    serve.add_argument("--response", metavar="COL", default=None,
                       help="the response column (y); required with --engine dask or "
                            "stream")
    serve.add_argument("--max-upload-mb", metavar="MB", type=float, default=None,
                       help="the largest file an upload may send, in MB (default 1000)")
    serve.add_argument("--max-rows", metavar="N", type=int, default=None,
                       help="refuse tables with more data rows (default 5000000; 0: no "
                            "limit)")
    serve.add_argument("--max-columns", metavar="N", type=int, default=None,
                       help="refuse tables with more columns (default 2000; 0: no limit)")
    serve.add_argument("--time-budget", metavar="SECONDS", type=float, default=None,
                       help="how long a request waits for an analysis before it answers "
                            "that the analysis is still running (default 30; 0: no limit)")
    serve.set_defaults(run=run_serve)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit code (0 ok, 1 threshold crossed, 2 bad input)."""
    for stream in (sys.stdout, sys.stderr):
        # A terminal that cannot show ∞ or β gets '?' rather than a crash.
        if isinstance(stream, io.TextIOWrapper):
            stream.reconfigure(errors="replace")
    try:
        args = build_parser().parse_args(argv)
        return int(args.run(args))
    except SystemExit as e:  # --help and --version exit through argparse
        return e.code if isinstance(e.code, int) else EXIT_OK
    except InputError as e:
        print(f"rankscope: {e.message}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as e:  # e.g. an unreadable recipe file, or a port already in use
        if e.filename:
            text = f"{e.filename}: cannot be read ({e.strerror or e}). Check the path."
        else:
            text = f"{e.strerror or e}."
        print(f"rankscope: {text}", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":
    raise SystemExit(main())
