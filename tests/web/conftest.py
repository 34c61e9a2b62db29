"""Fixtures for the web tests: an app with its own sessions, and a table whose exact
dependencies come from unit definitions (outside references), uploaded as CSV."""

from __future__ import annotations

import io

import numpy as np
import pytest
from fastapi.testclient import TestClient

from rankscope.web.app import create_app

#: Kilograms per avoirdupois pound, exact by definition (international yard and pound
#: agreement, 1959).
KG_PER_LB = 0.45359237


def units_table(n: int = 60, seed: int = 7) -> dict[str, np.ndarray | list[str]]:
    """Columns: temp_c and temp_f (°F = 32 + 1.8·°C, NIST SP 811 App. B.8), mass_lb and
    mass_kg (the 1959 pound), hours, region (3 levels) and a response load."""
    rng = np.random.default_rng(seed)
    temp_c = np.round(rng.normal(12, 6, n), 1)
    mass_lb = rng.integers(200, 900, n).astype(float)
    hours = np.round(rng.uniform(2, 12, n), 1)
    region = [("north", "south", "west")[i % 3] for i in range(n)]
    shift = np.array([{"north": 0.0, "south": 25.0, "west": -10.0}[r] for r in region])
    load = np.round(50 + 3 * temp_c + 0.2 * mass_lb * KG_PER_LB + 4 * hours + shift
                    + rng.normal(0, 5, n), 2)
    return {"temp_c": temp_c, "temp_f": 32 + 1.8 * temp_c, "mass_lb": mass_lb,
            "mass_kg": mass_lb * KG_PER_LB, "hours": hours, "region": region, "load": load}


def to_csv(cols: dict) -> bytes:
    out = io.StringIO()
    names = list(cols)
    out.write(",".join(names) + "\n")
    n = len(cols[names[0]])
    fmt = {"temp_c": "{:.1f}", "temp_f": "{:.2f}", "mass_lb": "{:.0f}", "mass_kg": "{:.8f}",
           "hours": "{:.1f}", "load": "{:.2f}"}
    for i in range(n):
        out.write(",".join(fmt[c].format(cols[c][i]) if c in fmt else str(cols[c][i])
                           for c in names) + "\n")
    return out.getvalue().encode()


@pytest.fixture(autouse=True)
def data_home(tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch):
    """The default data folder (~/.rankscope) moved to a temporary one, for this process and
    the servers it starts: tests never write under the home directory."""
    home = tmp_path_factory.mktemp("rankscope-home")
    monkeypatch.setenv("RANKSCOPE_HOME", str(home))
    return home


@pytest.fixture()
def client() -> TestClient:
    return TestClient(create_app())


@pytest.fixture(scope="module")
def app_client() -> TestClient:
    """One app for a module's many examples (fuzz), with server errors as answers."""
    return TestClient(create_app(), raise_server_exceptions=False)


@pytest.fixture()
def table() -> dict:
    return units_table()


@pytest.fixture()
def sid(client: TestClient, table: dict) -> str:
    """A session on the units table with `load` as the response."""
    r = client.post("/api/upload", files={"file": ("units.csv", to_csv(table), "text/csv")})
    assert r.status_code == 201, r.text
    session = r.json()["session"]
    step(client, session, {"step": "response", "column": "load"})
    return session


def step(client: TestClient, session: str, payload: dict, kind: str = "step"):
    return client.post(f"/api/s/{session}/changes", json={"kind": kind, "payload": payload})
