"""Peak memory of one in-memory diagnosis, measured in a fresh process with tracemalloc.

Run as `python -m rankscope.scale.memory N P SEED`; prints one JSON line. Times nothing.
"""

from __future__ import annotations

import json
import sys
import tracemalloc

from rankscope.core import diagnose
from rankscope.scale.planted import planted


def main(argv: list[str]) -> None:
    n, p, seed = (int(a) for a in argv[:3])
    tracemalloc.start()  # numpy reports its buffers to tracemalloc
    X, y, columns = planted(n, p, seed)
    matrix = X.nbytes + y.nbytes
    tracemalloc.reset_peak()
    diagnose(X, columns, y, rank_correlation=False)
    _, peak = tracemalloc.get_traced_memory()
    print(json.dumps({"matrix_bytes": matrix, "peak_bytes": peak}))


if __name__ == "__main__":
    main(sys.argv[1:])
