"""Row reduction to a small triangular factor: one pass over the rows, block by block.

Pure numpy; knows nothing about names, files or what the columns mean.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np
from scipy.linalg import lapack

#: Rows per block: about 2 MiB of float64 per block (cache-sized: 20-25% faster than
#: 8 MiB at 200,000 × 100 and 1,000,000 × 50, python -m rankscope.benchmarks.core), never
#: under 1024 rows.
BLOCK_BYTES = 2 * 2**20


def block_rows(p: int) -> int:
    """Rows per block for a matrix with p columns (bounded memory, LAPACK-sized panels)."""
    return max(1024, BLOCK_BYTES // (8 * max(p, 1)))


def upper_sign_fixed(R: np.ndarray) -> np.ndarray:
    """Flip rows of a triangular factor so that its diagonal is non-negative.

    Householder QR leaves the sign of each diagonal entry free; fixing it makes the
    factor unique (for full column rank), so results do not depend on the route taken.
    """
    signs = np.where(np.diag(R) < 0, -1.0, 1.0)
    return R * signs[:, None]


def square_factor(R: np.ndarray, k: int) -> np.ndarray:
    """Pad or trim an (m, k) factor to (k, k): zero rows keep the Gram matrix unchanged."""
    if R.shape[0] >= k:
        return R[:k]
    out = np.zeros((k, k))
    out[: R.shape[0]] = R
    return out


def merge(R: np.ndarray | None, block: np.ndarray) -> np.ndarray:
    """Triangular factor of [rows behind R; block] by one Householder QR of the stack.

    This is the combine step of tall-skinny QR (Demmel, Grigori, Hoemmen & Langou,
    SIAM J. Sci. Comput. 34(1), 2012): the Gram matrix is never formed.
    """
    k = block.shape[1]
    stacked = block if R is None else np.vstack([R, block])
    return square_factor(np.linalg.qr(stacked, mode="r"), k)


#: Panel widths of the triangular-pentagonal QR (LAPACK dtpqrt's NB) by the number of
#: columns k: (below this k, this width). Measured on 2 MiB blocks with one BLAS thread on the
#: 2-core machine: 16 best for 50 to 100 columns (32 and 64 15-40% slower there); from a few
#: hundred columns on, wider panels put more of the work in matrix-matrix products: at
#: 1,000 columns 32 took 1.32 s against 1.51 s for 16, at 2,000 columns 64 took 5.3 s
#: against 5.8 s for 32 and 6.4 s for 16.
PANELS = ((250, 16), (1500, 32))
WIDE_PANEL = 64


def panel_width(k: int) -> int:
    """dtpqrt's panel width for a factor of k columns (see PANELS), at most k."""
    width = next((w for below, w in PANELS if k < below), WIDE_PANEL)
    return max(1, min(width, k))


def _absorb(R: np.ndarray, block: np.ndarray) -> np.ndarray:
    """Triangular factor of [R; block], R upper triangular (k, k) in Fortran order.

    The same Householder reduction as merge, but LAPACK dtpqrt (triangular-pentagonal QR,
    LAPACK 3.4; the structured TSQR step of Demmel et al. 2012) skips the zeros under R's
    diagonal and takes the block in place, with no stacked copy.
    """
    k = R.shape[1]
    b = np.asfortranarray(block, dtype=np.float64)
    a, _, _, info = lapack.dtpqrt(0, panel_width(k), R, b, overwrite_a=1, overwrite_b=1)
    if info != 0:
        raise np.linalg.LinAlgError(f"dtpqrt failed (info {info})")
    return a


def shifts_of(block: np.ndarray) -> np.ndarray:
    """(k,) a shift per column: the mean of the block's rows (0 for the constant column 0).

    Subtracting a value near the column's centre before the reduction is the shifted
    scheme for sums of squares (Chan, Golub & LeVeque, The American Statistician 37, 1983):
    an offset of 1e9 on a range of 100 then costs no digits of the centred part, where
    reducing the raw column loses about log10(offset/range) of them. Any value inside the
    column's range serves; the first block's mean is at hand before the first reduction.
    """
    s = np.asarray(block, dtype=np.float64).mean(axis=0)
    s[~np.isfinite(s)] = 0.0
    s[0] = 0.0
    return s


def unshift(T: np.ndarray, shifts: np.ndarray) -> np.ndarray:
    """Factor of M from the factor T_c of the shifted M_c = M − 1·sᵀ (constant in column 0).

    M = M_c·S with S = I + e_0·sᵀ, so T = T_c·S is still upper triangular and differs from
    T_c in row 0 only: T[0, j] = T_c[0, j] + s_j·T_c[0, 0] (T_c[:, 0] = T_c[0, 0]·e_0).
    Rows 1.. (the centred factor) keep every digit the shift saved.
    """
    out = T.copy()
    out[0] += shifts * T[0, 0]
    return out


def reduce_blocks(blocks: Iterable[np.ndarray], k: int) -> np.ndarray:
    """Upper-triangular (k, k) factor T with TᵀT = MᵀM for M the stacked blocks.

    blocks: arrays of shape (rows_i, k); Fortran order avoids a copy (the blocks may be
    overwritten). Memory is bounded by one block plus T. The diagonal of the result is
    non-negative.
    """
    R: np.ndarray | None = None
    for block in blocks:
        if not block.shape[0]:
            continue
        if R is None:
            R = np.asfortranarray(np.triu(merge(None, block)))
        else:
            R = _absorb(R, block)
    if R is None:
        return np.zeros((k, k))
    return upper_sign_fixed(np.triu(R))
