"""Fixtures for the store tests: a fresh store in a temporary data folder.

Each test gets its own folder; nothing is written under the home directory.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest

from rankscope.store import Store


@pytest.fixture
def store(tmp_path: Path) -> Iterator[Store]:
    s = Store(tmp_path / "data")
    yield s
    s.close()
