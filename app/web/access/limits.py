"""What one server accepts: upload size, table rows and columns, seconds per analysis.

Plain settings only; the readers, the body check and the analysis budget enforce them.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Any

#: Bytes per MB in the --max-upload-mb flag and in messages (decimal, as file managers show).
MB = 1_000_000


@dataclass(frozen=True)
class Limits:
    """max_upload_bytes: the largest file an upload may send (decompressed content too).
    max_rows, max_columns: the largest table read (None: no limit).
    analysis_seconds: how long a request waits for an analysis (None: as long as it takes).
    workers: how many analyses may run at once (default: one per core)."""

    max_upload_bytes: int = 1000 * MB
    max_rows: int | None = 5_000_000
    max_columns: int | None = 2_000
    analysis_seconds: float | None = 30.0
    workers: int = max(os.cpu_count() or 1, 1)

    def reading(self) -> dict[str, Any]:
        """The keyword arguments of read_table/read_bytes that apply these limits."""
        return {"max_bytes": self.max_upload_bytes, "max_rows": self.max_rows,
                "max_columns": self.max_columns}

    def upload_text(self) -> str:
        """The upload limit as a person reads it."""
        mb = self.max_upload_bytes / MB
        return f"{mb:,.0f} MB" if mb >= 1 else f"{self.max_upload_bytes:,} bytes"
