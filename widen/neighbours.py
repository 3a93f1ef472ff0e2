"""Exact cosine nearest neighbours for every vocabulary entry, in blocks.

A block of rows is multiplied by the whole normalised matrix (one BLAS call), the
entry itself is masked, and the top k are picked a few rows at a time. Peak extra memory is
`block_rows x V` floats and the picking's temporaries for 128 rows, never the full V x V matrix.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import numpy.typing as npt

__all__ = ["normalise_rows", "top_k_table", "top_k_for_vector", "top_k_rows"]

Matrix = npt.NDArray[np.float32]

#: Rows of a block picked from at once (the top k of each).
_PICK_ROWS = 128


def normalise_rows(vectors: npt.ArrayLike) -> Matrix:
    """Unit-length float32 rows; an all-zero row stays zero."""
    matrix = np.asarray(vectors, dtype=np.float32)
    norms = np.linalg.norm(matrix, axis=1, keepdims=True)
    norms[norms == 0] = 1.0
    result: Matrix = (matrix / norms).astype(np.float32, copy=False)
    return result


def top_k_rows(sims: Matrix, k: int, stride: int = 8) -> tuple[npt.NDArray[np.int32], Matrix]:
    """Exact top k of every row, ordered by similarity descending, then index ascending.

    Selecting over whole rows costs more than the matrix product, so a cheaper bound goes
    first: the k-th largest value of every `stride`-th column can only be smaller than or
    equal to the k-th largest of the whole row, so entries below it can never make the top k.
    Only the few entries at or above that bound (about k x stride a row) are sorted.
    """
    rows, width = sims.shape
    k = min(k, width)
    sub = sims[:, ::stride]
    if sub.shape[1] < 2 * k:
        part = np.argpartition(sims, width - k, axis=1)[:, width - k :]
        part_sims = np.take_along_axis(sims, part, axis=1)
        order = np.lexsort((part, -part_sims), axis=1)
        idx = np.take_along_axis(part, order, axis=1)
        return idx.astype(np.int32), np.take_along_axis(part_sims, order, axis=1).astype(np.float32)
    bound = np.partition(sub, sub.shape[1] - k, axis=1)[:, sub.shape[1] - k]
    row_of, col_of = np.nonzero(sims >= bound[:, None])  # row-major: columns ascend within a row
    val_of = sims[row_of, col_of]
    # One integer key, row ascending then similarity descending; a stable sort keeps the column
    # order for ties. Float bits are mapped to unsigned integers that sort like the floats.
    bits = val_of.view(np.uint32)
    sortable = np.where(bits & 0x80000000, ~bits, bits | 0x80000000).astype(np.uint64)
    key = (row_of.astype(np.uint64) << np.uint64(32)) | (np.uint64(0xFFFFFFFF) - sortable)
    order = np.argsort(key, kind="stable")
    starts = np.searchsorted(row_of[order], np.arange(rows))
    take = order[(starts[:, None] + np.arange(k)[None, :]).ravel()]
    idx = col_of[take].reshape(rows, k).astype(np.int32)
    return idx, val_of[take].reshape(rows, k).astype(np.float32)


def top_k_table(
    normed: Matrix,
    k: int,
    block_rows: int = 2048,
    on_block: Callable[[int], None] | None = None,
) -> tuple[npt.NDArray[np.int32], Matrix]:
    """For each row, the k most cosine-similar other rows: (indices V x k, similarities V x k)."""
    vocab = normed.shape[0]
    k = min(k, max(vocab - 1, 0))
    indices = np.zeros((vocab, k), dtype=np.int32)
    sims_out = np.zeros((vocab, k), dtype=np.float32)
    if k == 0:
        return indices, sims_out
    # One block's buffer, reused: a new product never lives beside the last one.
    buffer = np.empty((min(block_rows, vocab), vocab), dtype=np.float32)
    for start in range(0, vocab, block_rows):
        stop = min(start + block_rows, vocab)
        sims = np.matmul(normed[start:stop], normed.T, out=buffer[: stop - start])
        rows = np.arange(stop - start)
        sims[rows, rows + start] = -np.inf
        # Picking runs on a few rows at a time: its temporaries (a mask and a partition of every
        # stride-th column) stay a small fraction of the block instead of a third of it.
        for first in range(0, stop - start, _PICK_ROWS):
            last = min(first + _PICK_ROWS, stop - start)
            idx, val = top_k_rows(sims[first:last], k)
            indices[start + first : start + last] = idx
            sims_out[start + first : start + last] = val
        if on_block is not None:
            on_block(stop - start)
    return indices, sims_out


def top_k_for_vector(normed: Matrix, vector: npt.ArrayLike, k: int) -> tuple[npt.NDArray[np.int32], Matrix]:
    """Exact search for one (already normalised) vector over all rows."""
    query = np.asarray(vector, dtype=np.float32).reshape(1, -1)
    sims = query @ normed.T
    idx, val = top_k_rows(sims, k)
    return idx[0], val[0]
