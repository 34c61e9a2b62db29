"""Row reduction to a small triangular factor: one pass over the rows, block by block.

Pure numpy; knows nothing about names, files or what the columns mean.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

#: Rows per block: about 8 MiB of float64 per block, never fewer than 1024 rows.
BLOCK_BYTES = 8 * 2**20


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


def reduce_blocks(blocks: Iterable[np.ndarray], k: int) -> np.ndarray:
    """Upper-triangular (k, k) factor T with TᵀT = MᵀM for M the stacked blocks.

    blocks: arrays of shape (rows_i, k). Memory is bounded by one block plus T.
    The diagonal of the result is non-negative.
    """
    R: np.ndarray | None = None
    for block in blocks:
        if block.shape[0]:
            R = merge(R, block)
    if R is None:
        return np.zeros((k, k))
    return upper_sign_fixed(R)
