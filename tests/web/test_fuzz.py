"""Fuzz of the endpoints that take a user's bytes or JSON: uploads (random bytes, CSV-like text
in random dialects and encodings, random names), changes, undo/redo, pins, titles and recipe
imports (random JSON, wrong types, huge numbers, nesting). Never a 5xx; every 4xx says why.

Reference: RFC 9110 §15.5 (4xx: the request is at fault) and §15.6 (5xx: the server is).
"""

from __future__ import annotations

import codecs
import gzip
import json
import os
import string

import pytest
from fastapi.testclient import TestClient
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from rankscope.design.steps import SPECS
from tests.web.conftest import to_csv, units_table

#: Examples per endpoint: enough to reach the odd corners, few enough to keep the suite fast
#: (RANKSCOPE_FUZZ_EXAMPLES=2000 for a longer hunt).
EXAMPLES = int(os.environ.get("RANKSCOPE_FUZZ_EXAMPLES", "150"))
FUZZ = settings(max_examples=EXAMPLES, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                       HealthCheck.function_scoped_fixture])
COLUMNS = list(units_table())
EXTENSIONS = [".csv", ".tsv", ".txt", ".gz", ".csv.gz", ".xlsx", ".parquet", ".json", ".xls",
              ".html", "", ".CSV", ".exe"]


@pytest.fixture(scope="module")
def session(app_client: TestClient) -> str:
    r = app_client.post("/api/upload", files={"file": ("units.csv", to_csv(units_table()),
                                                       "text/csv")})
    assert r.status_code == 201
    return r.json()["session"]


def well_refused(r, fuzzed: bool = True) -> None:
    """No server error; a refusal carries {"error": text}."""
    if fuzzed:
        event(f"HTTP {r.status_code}")  # the spread shows with --hypothesis-show-statistics
    assert r.status_code < 500, (r.status_code, r.text[:500])
    if r.status_code >= 400:
        body = r.json()
        assert isinstance(body, dict) and isinstance(body.get("error"), str), r.text[:500]
        assert body["error"].strip()
        # The safety nets word an unforeseen exception; the fuzz must find none of them.
        assert "failed (" not in body["error"], body["error"]
        assert "in the server's log" not in body["error"], body["error"]


# -- uploads --------------------------------------------------------------------------------

CELLS = st.one_of(
    st.integers(-10**6, 10**6).map(str),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.sampled_from(["", "NA", "NaN", "nan", "Inf", "-inf", "1e308", "1e309", "-1e400",
                     "=1+1", "@SUM(A1)", "+cmd", "<script>x</script>", "TRUE", "no",
                     "2024-02-30", "1,5", " 3 ", '"', '""', '"a,b"', "\x00", "é", "\u202e",
                     "0x1F", "1_000"]),
    st.text(max_size=12),
)


@st.composite
def csv_like(draw) -> bytes:
    """Text with a header and rows in a random dialect, encoding and compression."""
    delim = draw(st.sampled_from([",", ";", "\t", "|", " ", ":"]))
    quote = draw(st.sampled_from(['"', "'", ""]))
    newline = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    width = draw(st.integers(1, 6))
    names = draw(st.lists(st.one_of(st.sampled_from(["x", "y", "x", "", "<b>", "a b"]),
                                    st.text(max_size=8)), min_size=width, max_size=width))
    rows = draw(st.lists(st.lists(CELLS, min_size=0, max_size=width + 1), max_size=12))

    def line(cells: list[str]) -> str:
        return delim.join(quote + c + quote if quote and draw(st.booleans()) else c
                          for c in cells)

    text = newline.join(line(r) for r in [names, *rows]) + draw(st.sampled_from(["", newline]))
    encoding = draw(st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "utf-16-le", "latin-1",
                                     "cp1252", "utf-32"]))
    data = codecs.encode(text, encoding, errors="replace")
    if draw(st.booleans()):
        data = data[: draw(st.integers(0, len(data)))]  # cut short anywhere
    if draw(st.integers(0, 4)) == 0:
        data = gzip.compress(data, mtime=0)
    return data


FILENAMES = st.builds(lambda stem, ext: stem + ext,
                      st.text(alphabet=string.ascii_letters + "é <>\"'./\\;", max_size=12),
                      st.sampled_from(EXTENSIONS))


@st.composite
def numeric_table(draw) -> bytes:
    """A well-formed numeric CSV with a few odd cells: most of these are read."""
    width = draw(st.integers(2, 5))
    rows = draw(st.integers(1, 15))
    odd = st.one_of(st.floats(allow_nan=False, allow_infinity=False).map(repr),
                    st.sampled_from(["", "NA", "1e308", "-1e154", "5e-324", "0"]))
    cells = [[draw(st.one_of(st.integers(-99, 99).map(str), odd)) for _ in range(width)]
             for _ in range(rows)]
    names = [f"c{j}" for j in range(width)]
    return "\n".join(",".join(r) for r in [names, *cells]).encode()


@FUZZ
@given(data=st.one_of(csv_like(), numeric_table(), st.binary(max_size=2048)),
       name=st.one_of(FILENAMES, st.just("table.csv")))
def test_upload_never_fails_the_server(app_client: TestClient, data: bytes, name: str) -> None:
    r = app_client.post("/api/upload", files={"file": (name, data, "application/octet-stream")})
    well_refused(r)
    if r.status_code == 201:  # a table after all: its pages and a response choice answer too
        sid = r.json()["session"]
        for path in (f"/s/{sid}", f"/api/s/{sid}/diagnosis"):
            assert app_client.get(path).status_code < 500, path
        well_refused(app_client.post(f"/api/s/{sid}/changes?html=0", json={
            "kind": "step", "payload": {"step": "response",
                                        "column": r.json()["columns"][0]}}))
        assert app_client.get(f"/s/{sid}/inspect").status_code < 500


# -- JSON bodies ----------------------------------------------------------------------------

HUGE = st.sampled_from([10**400, -10**400, 1e308, -1e308, 2**63, -2**63 - 1, 0, -0.0, 1e-320])
LEAVES = st.one_of(st.none(), st.booleans(), st.integers(), HUGE,
                   st.floats(allow_nan=False, allow_infinity=False), st.text(max_size=20),
                   st.sampled_from(COLUMNS + ["(intercept)", "region[south]", "nope", ""]))
JSON = st.recursive(LEAVES, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(st.text(max_size=8), inner, max_size=4)),
    max_leaves=12)
FIELD_NAMES = sorted({f.name for spec in SPECS.values() for f in spec.fields})


@st.composite
def step_payload(draw) -> dict:
    """A step with a known or random name and fields of the right or wrong type."""
    payload = {"step": draw(st.one_of(st.sampled_from(sorted(SPECS)), st.text(max_size=10),
                                      LEAVES))}
    for field in draw(st.lists(st.sampled_from(FIELD_NAMES), max_size=5)):
        payload[field] = draw(st.one_of(LEAVES, JSON,
                                        st.lists(st.sampled_from(COLUMNS), max_size=4)))
    return payload


def typed(field) -> st.SearchStrategy:
    """Values of a step field's own type (so that many steps are accepted and analysed)."""
    column = st.sampled_from(COLUMNS)
    return {
        "column": column, "column_or_null": st.one_of(st.none(), column),
        "columns": st.lists(column, min_size=2, max_size=4, unique=True),
        "number": st.one_of(st.floats(-1e6, 1e6), HUGE, st.integers(-3, 3)),
        "flag": st.booleans(), "text": st.text(max_size=10),
        "choice": st.sampled_from(field.choices or ("x",)),
    }.get(field.type, LEAVES)


@st.composite
def sound_step(draw) -> dict:
    """A known step with each field of its type, some left out."""
    spec = SPECS[draw(st.sampled_from(sorted(SPECS)))]
    out = {"step": spec.name}
    for field in spec.fields:
        if field.required or draw(st.booleans()):
            out[field.name] = draw(typed(field))
    return out


@st.composite
def change_body(draw) -> object:
    """Mostly well-shaped changes (so many are analysed and saved), else anything at all."""
    if draw(st.integers(0, 9)) < 6:
        kind = draw(st.sampled_from(["step", "step", "step", "keep", "ridge"]))
        payload = draw({
            "step": sound_step(),
            "keep": st.fixed_dictionaries({"column": st.one_of(st.sampled_from(COLUMNS),
                                                               LEAVES)}),
            "ridge": st.fixed_dictionaries({"penalty": st.one_of(st.floats(0, 1e3), HUGE,
                                                                 LEAVES)}),
        }[kind])
        body = {"kind": kind, "payload": payload}
        if draw(st.booleans()):
            body["change_id"] = draw(st.text(max_size=12))
        return body
    kind = draw(st.one_of(st.sampled_from(["step", "keep", "ridge"]), LEAVES))
    payload = draw(st.one_of(step_payload(), JSON,
                             st.fixed_dictionaries({"column": LEAVES}),
                             st.fixed_dictionaries({"penalty": st.one_of(LEAVES, HUGE)})))
    body = {"kind": kind, "payload": payload}
    if draw(st.booleans()):
        body["base_version"] = draw(st.one_of(st.integers(-5, 50), LEAVES))
    if draw(st.booleans()):
        body["change_id"] = draw(LEAVES)
    return draw(st.one_of(st.just(body), JSON))


def raw_json(value: object) -> bytes:
    """JSON text; NaN and Infinity tokens, which Python's parser accepts, are kept."""
    return json.dumps(value, allow_nan=True).encode()


#: JSON that Python's parser refuses or that is extreme: a 5,000-digit integer (beyond the
#: int conversion limit), deep nesting, NaN, a lone surrogate, a truncated document.
ODD_JSON = [b'{"kind": "ridge", "payload": {"penalty": 1' + b"0" * 5000 + b"}}",
            b"[" * 5000 + b"]" * 5000, b'{"kind": "ridge", "payload": {"penalty": NaN}}',
            b'{"kind": "ridge", "payload": {"penalty": -Infinity}}',
            b'{"kind": "step", "payload": {"step": "\\ud800"}}', b'{"kind": "st',
            b"", b"null", b'"step"', b"\xff\xfe{}"]


@pytest.mark.parametrize("content", ODD_JSON)
@pytest.mark.parametrize("route", ["changes", "undo", "redo", "pins", "title"])
def test_odd_json_is_refused_with_a_message(app_client: TestClient, session: str,
                                            route: str, content: bytes) -> None:
    r = app_client.post(f"/api/s/{session}/{route}?html=0", content=content,
                        headers={"content-type": "application/json"})
    well_refused(r, fuzzed=False)


@FUZZ
@given(body=change_body(), html=st.booleans())
def test_changes_never_fail_the_server(app_client: TestClient, session: str, body: object,
                                       html: bool) -> None:
    url = f"/api/s/{session}/changes" + ("" if html else "?html=0")
    r = app_client.post(url, content=raw_json(body),
                        headers={"content-type": "application/json"})
    well_refused(r)


@FUZZ
@given(route=st.sampled_from(["undo", "redo", "pins", "title"]),
       body=st.one_of(JSON, st.builds(dict, label=LEAVES), st.builds(dict, title=LEAVES),
                      st.builds(dict, base_version=LEAVES, change_id=LEAVES)),
       text=st.one_of(st.none(), st.text(max_size=30)))
def test_other_bodies_never_fail_the_server(app_client: TestClient, session: str, route: str,
                                            body: object, text: str | None) -> None:
    content = raw_json(body) if text is None else text.encode()
    r = app_client.post(f"/api/s/{session}/{route}?html=0", content=content,
                        headers={"content-type": "application/json"})
    well_refused(r)


@FUZZ
@given(recipe=st.one_of(
    st.builds(lambda steps: {"steps": steps}, st.lists(sound_step(), min_size=1, max_size=3)),
    st.builds(lambda steps: {"steps": steps}, st.lists(step_payload(), max_size=4)),
    st.builds(lambda steps, extra: {"steps": steps, **extra},
              st.lists(st.one_of(step_payload(), JSON), max_size=3),
              st.dictionaries(st.text(max_size=6), JSON, max_size=3)),
    JSON),
    junk=st.one_of(st.none(), st.binary(max_size=300)),
    base=st.one_of(st.none(), st.integers(-3, 40).map(str), st.text(max_size=5)))
def test_recipe_import_never_fails_the_server(app_client: TestClient, session: str,
                                              recipe: object, junk: bytes | None,
                                              base: str | None) -> None:
    data = raw_json(recipe) if junk is None else junk
    form = {} if base is None else {"base_version": base}
    r = app_client.post(f"/api/s/{session}/recipe?html=0", data=form,
                        files={"file": ("recipe.json", data, "application/json")})
    well_refused(r)
