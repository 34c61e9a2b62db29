"""A dataset reduced once to its factor (streamed or on Dask) with what the reduction learned,
its bytes for the session store, and the row-less table that names it. Reads no rows here.
"""

from __future__ import annotations

import io
import json
import os
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from rankscope.core.factor import Factorization
from rankscope.scale.dask_engine import dask_stream, pieces
from rankscope.scale.stream import StreamInfo
from rankscope.scale.stream_finish import Layout
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table

#: Ends the file name of a reduced session, by engine, so a later run can tell them apart.
MARKS = {"dask": " (reduced on Dask)", "stream": " (reduced by streaming)"}
#: The first bytes of a stored factor, with its format's version.
MAGIC = b"rankscope-factor-1\n"


@dataclass(frozen=True)
class Reduced:
    """A dataset reduced once: its factor and what the stream learned about its design.

    folder: the dataset folder (or streamed file) as given. files: how many files it holds.
    engine: how it was reduced, "dask" or "stream".
    """

    F: Factorization
    info: StreamInfo
    folder: str
    files: int
    engine: str = "dask"

    def to_bytes(self) -> bytes:
        """The factor (raw .npy, no pickles) after a JSON header of everything else; the
        rows are not part of a reduced factor, so there are none to keep."""
        F, info = self.F, self.info
        head = {
            "factor": {"columns": list(F.columns), "n": int(F.n),
                       "sum_weights": float(F.sum_weights), "has_response": F.has_response,
                       "notes": list(F.notes)},
            "info": {"source": info.source, "kinds": dict(info.kinds),
                     "layout": asdict(info.layout), "table_notes": list(info.table_notes),
                     "passes": info.passes, "blocks": info.blocks,
                     "bytes_total": info.bytes_total, "seconds": info.seconds},
            "folder": self.folder, "files": self.files, "engine": self.engine,
        }
        out = io.BytesIO()
        text = json.dumps(head, sort_keys=True).encode()
        out.write(MAGIC + len(text).to_bytes(8, "little") + text)
        np.lib.format.write_array(out, np.ascontiguousarray(F.T, dtype=np.float64),
                                  allow_pickle=False)
        return out.getvalue()

    @classmethod
    def from_bytes(cls, data: bytes) -> Reduced:
        """The Reduced that to_bytes wrote; ValueError for anything else."""
        if not data.startswith(MAGIC):
            raise ValueError("not a stored factor")
        at = len(MAGIC)
        size = int.from_bytes(data[at:at + 8], "little")
        head: dict[str, Any] = json.loads(data[at + 8:at + 8 + size])
        T = np.lib.format.read_array(io.BytesIO(data[at + 8 + size:]), allow_pickle=False)
        f, i = head["factor"], head["info"]
        F = Factorization(T=T, columns=list(f["columns"]), n=int(f["n"]),
                          sum_weights=float(f["sum_weights"]),
                          has_response=bool(f["has_response"]), notes=list(f["notes"]))
        info = StreamInfo(source=i["source"], kinds=dict(i["kinds"]),
                          layout=Layout(**i["layout"]), table_notes=list(i["table_notes"]),
                          passes=int(i["passes"]), blocks=int(i["blocks"]),
                          bytes_total=int(i["bytes_total"]), seconds=float(i["seconds"]))
        return cls(F, info, str(head["folder"]), int(head["files"]), str(head["engine"]))

    def schema(self) -> Table:
        """A table with the dataset's columns and kinds and no rows: what names the session."""
        frame = pd.DataFrame({c: pd.Series([], dtype="float64") for c in self.info.kinds})
        rows = self.info.layout.rows_total
        if self.engine == "stream":
            note = (f"Reduced by streaming {rows:,} rows of {self.folder} block by block; "
                    "the rows stay there.")
        else:
            note = (f"Reduced on Dask from {rows:,} rows in {self.files} Parquet file(s) in "
                    f"{self.folder}; the rows stay there.")
        name = Path(self.folder).name + MARKS[self.engine]
        return Table(frame, dict(self.info.kinds), name, [note])

    def manifest(self) -> bytes:
        """What stands for the dataset's bytes in the store: where it is and its shape."""
        return json.dumps({f"{self.engine}_dataset": str(Path(self.folder).resolve()),
                           "rows": self.info.layout.rows_total, "columns": self.F.columns,
                           "response": self.info.response}, sort_keys=True).encode()


def engine_of(table: Table) -> str | None:
    """The engine that reduced the row-less table the store keeps (None: not reduced)."""
    if table.n_rows:
        return None
    return next((e for e, mark in MARKS.items() if table.source.endswith(mark)), None)


def reduce_on_dask(folder: str | os.PathLike, response: str | None,
                   scheduler: str | None = None) -> Reduced:
    """The dataset's design (default recipe, with `response` as y) reduced once on Dask
    (scheduler: a cluster's address; None starts a local cluster on this computer)."""
    if not response:
        raise InputError("serving a dataset reduced on Dask needs a response column", "",
                         "Name it with --response COL")
    F, info = dask_stream(folder, [{"step": "response", "column": response}], scheduler)
    files = len({p.path for p in pieces(Path(folder))})
    return Reduced(F, info, str(folder), files)
