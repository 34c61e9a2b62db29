"""Shared test settings: hypothesis profiles (CI runs a fixed, modest number of examples) and
the one headless Chromium every browser test shares (Playwright allows one per thread)."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from hypothesis import HealthCheck, settings

settings.register_profile(
    "ci", max_examples=60, deadline=None, derandomize=True,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.register_profile(
    "dev", max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow]
)
settings.load_profile("ci" if os.environ.get("CI") else os.environ.get("HYPOTHESIS_PROFILE", "dev"))

CHROMIUM = Path("/usr/bin/chromium")


@pytest.fixture(scope="session")
def browser():
    if not CHROMIUM.exists():
        reason = f"{CHROMIUM} is missing (apt-get install chromium); browser tests need it"
        if os.environ.get("CI"):
            pytest.fail(reason)
        pytest.skip(reason)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(
            executable_path=str(CHROMIUM),
            args=["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking"],
        )
        yield b
        b.close()
