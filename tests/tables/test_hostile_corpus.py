"""The hostile corpus (tests/data/hostile): each file gives its expected message, or reads when
it is a legitimate table, through read_table, read_bytes and an upload to the web app, which
never answers 500.

What each file must give is in tests/data/hostile/expected.json; make_corpus.py writes them.
"""

from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from rankscope.tables.errors import InputError
from rankscope.tables.read import read_bytes, read_table
from rankscope.web.access.limits import Limits
from rankscope.web.app import create_app
from tests.data.hostile import make_corpus

CORPUS = make_corpus.HERE
EXPECTED: dict[str, dict] = json.loads((CORPUS / "expected.json").read_text())
EXPECTED.pop("_about")
NAMES = sorted(EXPECTED)
#: Committed files stay small enough for a repository.
MAX_COMMITTED_BYTES = 300_000


@pytest.fixture(scope="module")
def big(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    return make_corpus.big_files(tmp_path_factory.mktemp("hostile"))


def path_of(name: str, big: dict[str, Path]) -> Path:
    return big[name] if EXPECTED[name].get("generated") else CORPUS / name


def limits_for(name: str) -> Limits:
    return replace(Limits(), **EXPECTED[name].get("limits", {}))


def test_corpus_is_named_complete_and_small() -> None:
    committed = {p.name for p in CORPUS.iterdir()} - {
        "make_corpus.py", "expected.json", "__init__.py", "__pycache__", ".gitattributes"}
    generated = {n for n, e in EXPECTED.items() if e.get("generated")}
    assert committed == set(make_corpus.small_files())
    assert generated == set(make_corpus.BIG)
    assert set(EXPECTED) == committed | generated
    assert len(EXPECTED) >= 40
    for name in committed:
        assert (CORPUS / name).stat().st_size <= MAX_COMMITTED_BYTES, name
        # The committed bytes are what the generator writes (it is deterministic).
        assert (CORPUS / name).read_bytes() == make_corpus.small_files()[name], name
    for name, e in EXPECTED.items():
        assert ("error" in e) != ("reads" in e), name


def check(name: str, read) -> None:
    """Run read(); the outcome must be the manifest's."""
    e = EXPECTED[name]
    if "error" in e:
        with pytest.raises(InputError) as info:
            read()
        err = info.value
        assert e["error"] in err.message
        assert name in err.where  # the message names the file ...
        assert err.todo  # ... and says what to do
        return
    table = read()
    assert f"{table.n_rows}x{len(table.columns)}" == e["reads"]
    if "note" in e:
        assert e["note"] in " ".join(table.notes)


@pytest.mark.parametrize("name", NAMES)
def test_read_table(name: str, big: dict[str, Path]) -> None:
    check(name, lambda: read_table(path_of(name, big), name=name, **limits_for(name).reading()))


@pytest.mark.parametrize("name", NAMES)
def test_read_bytes(name: str, big: dict[str, Path]) -> None:
    data = path_of(name, big).read_bytes()
    check(name, lambda: read_bytes(data, name, **limits_for(name).reading()))


@pytest.fixture(scope="module")
def clients() -> dict[Limits, TestClient]:
    """One app per set of limits."""
    return {}


@pytest.mark.parametrize("name", NAMES)
def test_upload(name: str, big: dict[str, Path], clients: dict[Limits, TestClient]) -> None:
    limits = limits_for(name)
    client = clients.setdefault(limits, TestClient(create_app(limits=limits)))
    data = path_of(name, big).read_bytes()
    r = client.post("/api/upload", files={"file": (name, data, "application/octet-stream")})
    assert r.status_code < 500, r.text
    e = EXPECTED[name]
    if "error" in e:
        assert 400 <= r.status_code < 500  # RFC 9110 §15.5: the client's file is at fault
        assert e["error"] in r.json()["error"]
        assert name in r.json()["error"]
        return
    assert r.status_code == 201, r.text
    sid = r.json()["session"]
    # The pages that show the table and its analysis answer without a server error.
    for path in (f"/s/{sid}", f"/s/{sid}/inspect", f"/api/s/{sid}/diagnosis"):
        assert client.get(path).status_code < 500, path
    response = r.json()["columns"][-1]
    answer = client.post(f"/api/s/{sid}/changes",
                         json={"kind": "step", "payload": {"step": "response",
                                                           "column": response}})
    assert answer.status_code < 500, answer.text
    assert answer.status_code in (200, 400), answer.text
    if answer.status_code == 400:
        assert answer.json()["error"]
    for path in (f"/s/{sid}/inspect", f"/api/s/{sid}/diagnosis", f"/api/s/{sid}/figures",
                 f"/api/s/{sid}/export/report", f"/api/s/{sid}/export/script",
                 f"/api/s/{sid}/export/design"):
        assert client.get(path).status_code < 500, path
