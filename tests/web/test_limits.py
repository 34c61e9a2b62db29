"""Limits of one server: upload size (by Content-Length, while streaming, and exactly), rows and
columns of a table, the time budget of an analysis, and the serve flags that set them.

References: RFC 9110 §15.5.14 (413 Content Too Large) and §15.6.4 (503 Service Unavailable
with Retry-After) for the status codes.
"""

from __future__ import annotations

import io
import threading
import time
from dataclasses import replace

import openpyxl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from fastapi.testclient import TestClient

from rankscope.cli import build_parser, main, serve_limits
from rankscope.web.access.limits import MB, Limits
from rankscope.web.analyst import Analyst
from rankscope.web.app import create_app
from rankscope.web.budget import AnalysisTooSlow, Budget
from tests.web.conftest import to_csv, units_table

SMALL = Limits(max_upload_bytes=5_000, max_rows=50, max_columns=4, analysis_seconds=None)


def csv_rows(n: int, cols: int = 3) -> bytes:
    head = ",".join(f"c{j}" for j in range(cols))
    rows = [",".join(str((i * (j + 3)) % 17) for j in range(cols)) for i in range(n)]
    return ("\n".join([head, *rows]) + "\n").encode()


@pytest.fixture()
def small() -> TestClient:
    return TestClient(create_app(limits=SMALL))


def upload(client: TestClient, name: str, data: bytes):
    return client.post("/api/upload", files={"file": (name, data, "text/csv")})


def nothing_saved(client: TestClient) -> None:
    assert client.get("/api/sessions").json() == []


def test_declared_body_over_limit_is_refused_before_reading(small: TestClient) -> None:
    big = b"x" * (SMALL.max_upload_bytes + (2 << 20))
    r = upload(small, "big.csv", big)
    assert r.status_code == 413
    text = r.json()["error"]
    assert "limit of 5,000 bytes" in text and "--max-upload-mb" in text
    assert "Nothing was saved" in text
    nothing_saved(small)


def test_streamed_body_is_counted_and_cut_off(small: TestClient) -> None:
    read: list[int] = []

    def chunks():  # no Content-Length: the body arrives chunked, and is counted
        for _ in range(200):
            read.append(1)
            yield b"y" * 65_536

    r = small.post("/api/s/nope/changes", content=chunks(),
                   headers={"content-type": "application/json"})
    assert r.status_code == 413
    assert "limit" in r.json()["error"]


def test_file_just_over_limit_gets_the_route_message(small: TestClient) -> None:
    data = csv_rows(2000)
    assert SMALL.max_upload_bytes < len(data) < SMALL.max_upload_bytes + (1 << 20)
    r = upload(small, "rows.csv", data)
    assert r.status_code == 400
    assert "larger than this server's limit of 5,000 bytes" in r.json()["error"]
    nothing_saved(small)


def test_rows_over_limit_name_file_count_limit_and_remedy(small: TestClient) -> None:
    r = upload(small, "long.csv", csv_rows(60))
    assert r.status_code == 400
    text = r.json()["error"]
    assert text.startswith("long.csv: The table has 60 data rows, over the limit of 50")
    assert "rankscope serve --max-rows 70" in text and "rankscope check FILE --stream" in text
    nothing_saved(small)
    assert upload(small, "fits.csv", csv_rows(50)).status_code == 201


def test_columns_over_limit_refused_from_the_header(small: TestClient) -> None:
    r = upload(small, "wide.csv", csv_rows(3, cols=9))
    assert r.status_code == 400
    text = r.json()["error"]
    assert "wide.csv: The table has 9 columns, more than the limit of 4" in text
    assert "--max-columns" in text


def test_header_longer_than_the_sample_is_counted_as_at_least() -> None:
    from rankscope.tables.errors import InputError
    from rankscope.tables.read import read_bytes

    header = ",".join(f"a_rather_long_column_name_{j}" for j in range(5000))
    with pytest.raises(InputError) as info:
        read_bytes((header + "\n").encode() + b"1\n", "w.csv", max_columns=100)
    assert "has at least" in info.value.what and "limit of 100" in info.value.what


def test_excel_and_parquet_limits() -> None:
    small = TestClient(create_app(limits=replace(SMALL, max_upload_bytes=MB)))
    book = openpyxl.Workbook()
    for i in range(70):
        book.active.append([i, i * 2, i % 3])
    out = io.BytesIO()
    book.save(out)
    r = upload(small, "long.xlsx", out.getvalue())
    assert r.status_code == 400 and "more than 50 data rows" in r.json()["error"]
    assert "sheet 'Sheet'" in r.json()["error"]
    wide = pa.table({f"c{j}": [1.0, 2.0, 3.0] for j in range(6)})
    out = io.BytesIO()
    pq.write_table(wide, out)
    r = upload(small, "wide.parquet", out.getvalue())
    assert r.status_code == 400 and "6 columns, more than the limit of 4" in r.json()["error"]


class SlowAnalyst(Analyst):
    """Analyses with recipe steps take `delay` seconds more (a big table, as it were)."""

    delay = 1.5
    started = 0

    def _analyse(self, session, settings):
        if settings.steps:
            type(self).started += 1
            time.sleep(self.delay)
        return super()._analyse(session, settings)


@pytest.fixture()
def slow() -> TestClient:
    SlowAnalyst.started = 0
    return TestClient(create_app(analyst=SlowAnalyst, limits=replace(Limits(),
                                                                 analysis_seconds=0.3)))


def test_analysis_past_budget_answers_503_saves_nothing_and_retry_is_instant(slow) -> None:
    sid = upload(slow, "units.csv", to_csv(units_table())).json()["session"]
    change = {"kind": "step", "payload": {"step": "response", "column": "load"},
              "base_version": 0, "change_id": "c1"}
    t0 = time.monotonic()
    r = slow.post(f"/api/s/{sid}/changes", json=change)
    assert time.monotonic() - t0 < 1.2  # answered at the budget, not after the analysis
    assert r.status_code == 503
    assert r.headers["retry-after"] == "1"
    text = r.json()["error"]
    assert "took longer than 0.3 s" in text and "Nothing was saved or lost" in text
    history = slow.get(f"/api/s/{sid}/history").json()
    assert history["version"] == 0 and history["changes"] == []  # nothing saved
    # A retry while it still runs waits for the same analysis instead of starting another.
    again = slow.post(f"/api/s/{sid}/changes", json=change)
    assert again.status_code in (200, 503)
    time.sleep(SlowAnalyst.delay + 0.3)  # the analysis goes on and is kept
    t0 = time.monotonic()
    r = slow.post(f"/api/s/{sid}/changes", json=change)
    assert r.status_code == 200, r.text
    assert time.monotonic() - t0 < 1.0
    assert SlowAnalyst.started == 1
    history = slow.get(f"/api/s/{sid}/history").json()
    assert [c["payload"] for c in history["changes"]] == [change["payload"]]


def test_page_past_budget_is_a_503_page(slow) -> None:
    sid = upload(slow, "units.csv", to_csv(units_table())).json()["session"]
    ok = slow.post(f"/api/s/{sid}/changes?html=0", json={
        "kind": "ridge", "payload": {"penalty": 1.0}})
    assert ok.status_code == 200  # no recipe steps: not slow
    analyst = slow.app.state.analyst
    analyst.budget = Budget(0.2, 2)
    r = slow.post(f"/api/s/{sid}/changes", json={
        "kind": "step", "payload": {"step": "response", "column": "load"}})
    assert r.status_code == 503
    time.sleep(SlowAnalyst.delay + 0.3)
    # Saved now (instant), then the cache is emptied: the page's analysis is slow again.
    assert slow.post(f"/api/s/{sid}/changes?html=0", json={
        "kind": "step", "payload": {"step": "response", "column": "load"}}).status_code == 200
    analyst._cache.clear()
    analyst._engines.clear()
    page = slow.get(f"/s/{sid}/inspect")
    assert page.status_code == 503
    assert "took longer than 0.2 s" in page.text


def test_budget_bounds_concurrent_work_and_shares_a_running_one() -> None:
    budget = Budget(None, 2)
    running = peak = 0
    guard = threading.Lock()
    calls: list[int] = []

    def work() -> int:
        nonlocal running, peak
        with guard:
            running += 1
            peak = max(peak, running)
            calls.append(1)
        time.sleep(0.2)
        with guard:
            running -= 1
        return 7

    kept: list[int] = []
    results: list[int] = []
    threads = [threading.Thread(target=lambda k=k: results.append(
        budget.run(("k", k % 4), work, kept.append))) for k in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert results == [7] * 8
    assert len(calls) <= 8 and peak <= 2
    with pytest.raises(AnalysisTooSlow):
        Budget(0.05, 2).run("slow", lambda: time.sleep(0.5), lambda _: None)


def test_serve_flags_make_limits() -> None:
    args = build_parser().parse_args(["serve", "--max-upload-mb", "2.5", "--max-rows", "0",
                                      "--max-columns", "300", "--time-budget", "12"])
    assert serve_limits(args) == replace(Limits(), max_upload_bytes=int(2.5 * MB),
                                         max_rows=None, max_columns=300,
                                         analysis_seconds=12.0)
    assert serve_limits(build_parser().parse_args(["serve"])) is None


def test_bad_serve_flag_is_bad_input(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["serve", "--time-budget", "-1", "--no-browser"]) == 2
    err = capsys.readouterr().err
    assert "--time-budget must be a positive number" in err
