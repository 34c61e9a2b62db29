"""serve() from a notebook: a server on 127.0.0.1 in a background thread (one for all calls)
and a new session whose design is the one inspect() diagnoses."""

from __future__ import annotations

from urllib.parse import urlsplit

import httpx
import pytest

import rankscope
from rankscope.api import serve as serving
from tests.api.data import assert_close, planted


@pytest.fixture()
def served(tmp_path):
    yield lambda *a, **k: rankscope.serve(*a, data_dir=tmp_path, **k)
    serving.stop()


def _diagnosis(url: str) -> dict:
    parts = urlsplit(url)
    base = f"{parts.scheme}://{parts.netloc}"
    with httpx.Client(base_url=base, follow_redirects=True, timeout=60) as client:
        page = client.get(url)  # the link leaves its key in a cookie
        assert page.status_code == 200
        got = client.get(f"{parts.path}/diagnosis".replace("/s/", "/api/s/", 1))
        assert got.status_code == 200, got.text
        return got.json()


def _core(doc: dict) -> dict:
    out = {k: doc[k] for k in ("columns", "rank", "vif", "condition_number")}
    out["fit"] = {k: doc["fit"][k] for k in ("coefficients", "std_errors")}
    return out


def _same(served: dict, expected: dict) -> None:
    # The session applies its steps as edits of the factor (tests/web/test_refit_paths.py),
    # so it agrees with a diagnosis from scratch to rounding, not bit for bit.
    assert_close(_core(served), _core(expected), rel=1e-9)


def test_serve_opens_the_same_design_as_a_session(served):
    frame = planted()
    url = served(frame, "y", recipe=[{"step": "drop", "column": "z"}])
    assert url.startswith("http://127.0.0.1:") and "?t=" in url
    expected = rankscope.inspect(frame, "y", recipe=[{"step": "drop", "column": "z"}])
    _same(_diagnosis(url), expected.to_dict())
    # A second call reuses the running server and makes another session.
    again = served(frame, formula="y ~ u + v + C(g)")
    assert urlsplit(again).netloc == urlsplit(url).netloc and again != url
    by_formula = rankscope.inspect(frame, formula="y ~ u + v + C(g)")
    _same(_diagnosis(again), by_formula.to_dict())


def test_serve_a_fitted_model(served):
    smf = pytest.importorskip("statsmodels.formula.api")
    results = smf.ols("y ~ u + v + z", planted()).fit()
    url = served(results)
    got = _diagnosis(url)
    assert got["columns"] == ["(intercept)", "u", "v", "z"] and got["rank"] == 4


def test_the_notebook_server_closes_a_connection_that_never_sends_its_headers(served):
    """The notebook's server keeps the connection deadlines of `rankscope serve`
    (rankscope.web.access.connections): a client that opens a connection and never finishes
    its request line is closed after HEADER_SECONDS, not held forever."""
    import socket
    import time

    from rankscope.web.access.connections import HEADER_SECONDS

    url = served(planted(), "y")
    host, port = urlsplit(url).netloc.split(":")
    with socket.create_connection((host, int(port)), timeout=HEADER_SECONDS + 10) as conn:
        conn.sendall(b"GET / HTTP/1.1\r\nHost: 127.0.0.1\r\n")  # the headers never end
        started = time.monotonic()
        assert conn.recv(4096) == b""  # closed by the server (a timeout here raises)
        assert time.monotonic() - started < HEADER_SECONDS + 5
