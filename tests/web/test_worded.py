"""Every refusal is worded for a person: no message of the change routes (changes, undo/redo,
pins, titles, recipe imports, uploads) names a Python exception, for random and hostile
payloads alike; and the three cases once seen raw are worded at their cause.

References: the names of Python's builtin exception classes (the `builtins` module) and of
the libraries' own (sqlite3, numpy.linalg, json, pyarrow, starlette, python-multipart);
RFC 9110 §15.5 (4xx); the least-squares identity that with no predictors the fitted
constant is the response's mean (any regression text, e.g. Seber & Lee §3.1).
"""

from __future__ import annotations

import builtins
import re

import numpy as np
import pytest
from fastapi.testclient import TestClient
from hypothesis import given, settings
from hypothesis import strategies as st

from tests.web.conftest import to_csv, units_table
from tests.web.test_fuzz import (
    FILENAMES,
    FUZZ,
    JSON,
    change_body,
    raw_json,
    sound_step,
    step_payload,
)

#: Python's own exception names, and the libraries' that reach this program.
EXCEPTION_NAMES = sorted(
    {name for name, value in vars(builtins).items()
     if isinstance(value, type) and issubclass(value, BaseException)}
    | {"OperationalError", "DatabaseError", "IntegrityError", "LinAlgError", "JSONDecodeError",
       "ArrowInvalid", "ArrowException", "ArrowTypeError", "ParserError", "EmptyDataError",
       "ValidationError", "RequestValidationError", "MultiPartException",
       "MultipartParseError", "HTTPException", "InputError", "Traceback"})
NAMED = re.compile(r"\b(" + "|".join(map(re.escape, EXCEPTION_NAMES)) + r")\b")
WORDED = settings(FUZZ, max_examples=min(FUZZ.max_examples, 80))


@pytest.fixture(scope="module")
def session(app_client: TestClient) -> str:
    """A session with a response, so that changes are analysed and fitted."""
    r = app_client.post("/api/upload", files={"file": ("units.csv", to_csv(units_table()),
                                                       "text/csv")})
    sid = r.json()["session"]
    app_client.post(f"/api/s/{sid}/changes?html=0", json={
        "kind": "step", "payload": {"step": "response", "column": "load"}})
    return sid


def worded(r) -> None:
    """A refusal with a message for a person: no exception name in it, no 5xx."""
    assert r.status_code < 500, (r.status_code, r.text[:300])
    if r.status_code >= 400:
        text = r.json()["error"]
        found = NAMED.search(text)
        assert found is None, (found and found.group(), text)


def test_the_name_list_catches_what_it_should() -> None:
    assert NAMED.search("this change failed (OperationalError: database or disk is full)")
    assert NAMED.search("IndexError: arrays used as indices")
    assert not NAMED.search("the column 'mass_kg' is not in the table. Choose another")


@WORDED
@given(body=change_body(), base=st.one_of(st.none(), st.integers(-2, 30)))
def test_changes_are_refused_in_words(app_client: TestClient, session: str, body: object,
                                      base: int | None) -> None:
    if isinstance(body, dict) and base is not None:
        body = {**body, "base_version": base}
    r = app_client.post(f"/api/s/{session}/changes?html=0", content=raw_json(body),
                        headers={"content-type": "application/json"})
    worded(r)


@WORDED
@given(route=st.sampled_from(["undo", "redo", "pins", "title"]), body=JSON)
def test_moves_pins_and_titles_are_refused_in_words(app_client: TestClient, session: str,
                                                    route: str, body: object) -> None:
    worded(app_client.post(f"/api/s/{session}/{route}?html=0", content=raw_json(body),
                           headers={"content-type": "application/json"}))


@WORDED
@given(recipe=st.one_of(
    st.builds(lambda steps: {"steps": steps}, st.lists(sound_step(), min_size=1, max_size=4)),
    st.builds(lambda steps: {"steps": steps}, st.lists(step_payload(), max_size=4)),
    # Nesting as text: as values, hypothesis and json would recurse as deep themselves.
    st.integers(5, 5000).map(lambda d: b'{"steps": ' + b"[" * d + b"]" * d + b"}"),
    JSON))
def test_recipes_are_refused_in_words(app_client: TestClient, session: str,
                                      recipe: object) -> None:
    data = recipe if isinstance(recipe, bytes) else raw_json(recipe)
    worded(app_client.post(f"/api/s/{session}/recipe?html=0", files={
        "file": ("recipe.json", data, "application/json")}))


@WORDED
@given(name=st.one_of(FILENAMES, st.integers(200, 6000).map(lambda n: "n" * n + ".csv")),
       data=st.one_of(st.just(to_csv(units_table(n=12))), st.binary(max_size=300)))
def test_uploads_are_refused_in_words(app_client: TestClient, name: str, data: bytes) -> None:
    worded(app_client.post("/api/upload", files={"file": (name, data, "text/csv")}))


# -- the three cases once answered with an exception's name, worded at their cause ---------

def test_ridge_with_no_predictors_left_is_the_mean(client: TestClient) -> None:
    table = units_table()
    sid = client.post("/api/upload", files={"file": ("units.csv", to_csv(table), "text/csv")}
                      ).json()["session"]
    steps = [{"step": "response", "column": "load"}] + [
        {"step": "drop", "column": c} for c in table if c != "load"]
    for s in steps:
        assert client.post(f"/api/s/{sid}/changes?html=0",
                           json={"kind": "step", "payload": s}).status_code == 200
    r = client.post(f"/api/s/{sid}/changes?html=0",
                    json={"kind": "ridge", "payload": {"penalty": 0.5}})
    assert r.status_code == 200, r.text
    chosen = client.get(f"/api/s/{sid}/diagnosis").json()["ridge"]["chosen"]
    # With nothing to penalize, ridge is the constant-only fit: the mean of the response.
    assert chosen["coefficients"] == {}
    assert np.isclose(chosen["constant"], np.mean(table["load"]), rtol=1e-12)


def test_a_deeply_nested_recipe_is_refused_with_the_limit(client: TestClient, sid: str) -> None:
    r = client.post(f"/api/s/{sid}/recipe?html=0", files={
        "file": ("deep.json", b'{"steps": ' + b"[" * 5000 + b"]" * 5000 + b"}",
                 "application/json")})
    assert r.status_code == 400
    assert "nests brackets more than 20 deep" in r.json()["error"]
    worded(r)


def test_a_very_long_file_name_is_refused_with_what_to_do(client: TestClient) -> None:
    r = client.post("/api/upload", files={"file": ("n" * 5000 + ".csv",
                                                   to_csv(units_table(n=12)), "text/csv")})
    assert r.status_code == 400
    assert "file name is very long" in r.json()["error"] and "255" in r.json()["error"]
    worded(r)
