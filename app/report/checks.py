"""The `check` verdict: --fail-if rules read and measured on a Diagnosis dict, exit codes, and
the JSON document (plain types, non-finite as null) for the command line and the stream.

Reads finished results only: no linear algebra, no argument parsing, no printing.
"""

from __future__ import annotations

import json
import math
import operator
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import orjson

from rankscope.report.cautions import choose_cautions
from rankscope.tables.errors import InputError

if TYPE_CHECKING:  # the design package (pandas) loads when a design is built, not here
    from rankscope.design.design import Design

EXIT_OK = 0
EXIT_CROSSED = 1
EXIT_BAD_INPUT = 2


@dataclass(frozen=True)
class Rule:
    """One --fail-if rule: a metric compared with a limit (None for 'deficient')."""

    text: str
    metric: str
    limit: float | None
    inclusive: bool

    def crossed(self, value: float) -> bool:
        if self.limit is None:
            return bool(value)
        return (operator.ge if self.inclusive else operator.gt)(value, self.limit)


def _largest_vif(d: dict) -> tuple[float, str]:
    vif = d["vif"]
    if not vif:
        return 0.0, "no VIF (fewer than two predictors)"
    vals = {c: (math.inf if v is None else v) for c, v in vif.items()}
    top = max(vals.values())
    cols = [c for c, v in vals.items() if v == top]
    return top, f"largest VIF {_show(top)} ({', '.join(cols[:4])}{', …' if len(cols) > 4 else ''})"


def _largest_index(d: dict) -> tuple[float, str]:
    if any(d["index_exact"]):
        return math.inf, "an exact dependency (condition index ∞)"
    vals = [math.inf if v is None else v for v in d["condition_indices"]]
    top = max(vals, default=0.0)
    return top, f"largest condition index {_show(top)}"


def _cond(d: dict) -> tuple[float, str]:
    v = d["condition_number"]["equilibrated"]
    v = math.inf if v is None else v
    return v, f"condition number of the unit-length columns {_show(v)}"


def _deficient(d: dict) -> tuple[float, str]:
    p = len(d["columns"])
    return float(not d["full_rank"]), f"rank {d['rank']} of {p} columns"


METRICS: dict[str, Callable[[dict], tuple[float, str]]] = {
    "vif": _largest_vif,
    "index": _largest_index,
    "cond": _cond,
    "deficient": _deficient,
}


def _show(x: float) -> str:
    return "∞" if math.isinf(x) else f"{x:.4g}"


def parse_rule(text: str) -> Rule:
    """'vif>10', 'index>=30', 'cond>1e6' or 'deficient'."""
    t = text.strip().lower().replace(" ", "")
    if t == "deficient":
        return Rule(text, "deficient", None, False)
    sign = ">=" if ">=" in t else ">"
    name, _, limit = t.partition(sign)
    inclusive = sign == ">="
    if name not in METRICS or name == "deficient" or not limit:
        raise InputError(
            f"cannot read the rule {text!r}", "--fail-if",
            "Write vif>N, index>N, cond>N or deficient (for example --fail-if 'vif>10')")
    try:
        value = float(limit)
    except ValueError:
        value = math.nan
    if not math.isfinite(value):
        raise InputError(f"the limit in {text!r} is not a finite number", "--fail-if",
                         "Write a number after the sign, for example vif>10")
    return Rule(text, name, value, inclusive)


def evaluate(rules: list[Rule], d: dict) -> list[dict]:
    """Each rule with its measured value (null when infinite) and whether it is crossed."""
    out = []
    for r in rules:
        value, detail = METRICS[r.metric](d)
        out.append({
            "rule": r.text,
            "metric": r.metric,
            "limit": r.limit,
            "value": value if math.isfinite(value) else None,
            "crossed": r.crossed(value),
            "detail": detail,
        })
    return out


def check_document(diagnosis: dict, design: Design, source: str, notes: list[str],
                   checks: list[dict], extras: list[str] | None = None) -> dict[str, Any]:
    """`check --json`'s document: the diagnosis with the source, the extras asked for, the
    design's facts (the table's notes after the design's), the cautions and the rules'
    verdicts."""
    doc = dict(diagnosis)
    doc["source"] = source
    doc["extras"] = list(extras or [])
    doc["design"] = {
        "rows_total": design.rows_total,
        "rows_used": design.rows_used,
        "rows_dropped": design.rows_total - design.rows_used,
        "dropped_by": dict(design.dropped_by),
        "response": design.response,
        "intercept": design.intercept,
        "groups": {g: list(c) for g, c in design.groups.items()},
        "notes": list(design.notes) + list(notes),
    }
    doc["cautions"] = [c.to_dict() for c in choose_cautions(diagnosis)]
    doc["checks"] = checks
    return doc


def json_ready(obj: Any) -> Any:
    """Plain JSON types; a non-finite float becomes null (the contract's 'infinite or
    undefined'), numpy scalars become Python numbers."""
    if isinstance(obj, dict):
        return {str(k): json_ready(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [json_ready(v) for v in obj]
    if isinstance(obj, bool) or obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, int):
        return obj
    if hasattr(obj, "item"):  # numpy scalar
        return json_ready(obj.item())
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj


#: Containers the JSON writer lays out over several lines; anything else is a leaf.
_NESTED = {dict, list, tuple}


def json_text(doc: Any) -> str:
    """The document as ASCII JSON text (non-finite numbers as null, as json_ready makes them).

    Objects and lists of containers take a line per item, indented; a list or object of
    plain values (a matrix row, a column's proportions, a list of names) takes one line,
    written compactly by orjson (json's C encoder where orjson declines): a 1,000-column
    design's million cells then cost a tenth of a second, not the pure-Python encoder's
    twenty seconds (which any indent= selects).
    """
    parts: list[str] = []
    _write(doc, "", parts)
    parts.append("\n")
    return "".join(parts)


def _write(obj: Any, pad: str, parts: list[str]) -> None:
    if isinstance(obj, dict):
        items = obj.values()
    elif isinstance(obj, list | tuple):
        items = obj
    else:
        parts.append(_leaf(obj))
        return
    if not items or not (set(map(type, items)) & _NESTED):
        parts.append(_leaf(obj))
        return
    inner = pad + "  "
    if isinstance(obj, dict):
        parts.append("{")
        for i, (k, v) in enumerate(obj.items()):
            parts.append(("\n" if i == 0 else ",\n") + inner + json.dumps(str(k)) + ": ")
            _write(v, inner, parts)
        parts.append("\n" + pad + "}")
    else:
        parts.append("[")
        for i, v in enumerate(obj):
            parts.append(("\n" if i == 0 else ",\n") + inner)
            _write(v, inner, parts)
        parts.append("\n" + pad + "]")


#: orjson writes numpy values and writes a non-finite float as null, as the contract says.
_ORJSON_OPTIONS = orjson.OPT_SERIALIZE_NUMPY | orjson.OPT_NON_STR_KEYS


def _leaf(obj: Any) -> str:
    # orjson's float text is the shortest that reads back to the same double, as json's is;
    # text with non-ASCII characters or values it refuses (huge ints) goes through json.
    try:
        text = orjson.dumps(obj, option=_ORJSON_OPTIONS).decode()
        if text.isascii():
            return text
    except (TypeError, orjson.JSONEncodeError):
        pass
    try:
        return json.dumps(obj, allow_nan=False, default=json_ready)
    except ValueError:  # a non-finite number inside: null, as the contract says
        return json.dumps(json_ready(obj), allow_nan=False)
