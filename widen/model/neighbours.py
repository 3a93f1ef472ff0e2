"""Exact cosine nearest neighbours for every vocabulary entry, in blocks.

The table (`top_k_table`) computes the upper triangle of `V @ V.T` tile by tile and streams each
tile through a compiled top-k keeper (`widen.model.neighbour_kernel`, numba; imported only when a table
is built, so the service never loads it). Extra memory: a tile a thread and one threshold a row.
One query vector (`top_k_for_vector`) and small row sets (`top_k_rows`) are picked with numpy.
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
    block_rows: int = 512,
    on_block: Callable[[int], None] | None = None,
) -> tuple[npt.NDArray[np.int32], Matrix]:
    """For each row, the k most cosine-similar other rows: (indices V x k, similarities V x k),
    by similarity descending, then index ascending.

    The product is symmetric, so only its upper triangle is computed, as tiles of `block_rows`
    square, each offered to the rows and the columns it holds (`widen.model.neighbour_kernel`): half the
    arithmetic of `V @ V.T`. The tiles run in rounds in which no two share a block of rows (the
    circle method of a round-robin schedule), one thread a tile with BLAS on one thread."""
    from numba import get_num_threads
    from threadpoolctl import threadpool_limits

    from widen.model.neighbour_kernel import NO_ENTRY, sort_heaps, take_tiles

    vocab = normed.shape[0]
    k = min(k, max(vocab - 1, 0))
    heap_idx = np.full((vocab, k), NO_ENTRY, dtype=np.int32)
    heap_val = np.full((vocab, k), -np.inf, dtype=np.float32)
    if k == 0:
        return heap_idx, heap_val
    normed = np.ascontiguousarray(normed, dtype=np.float32)
    block_rows = min(block_rows, vocab)
    rounds = _rounds(-(-vocab // block_rows))
    buffers = np.empty((get_num_threads(), block_rows, block_rows), dtype=np.float32)  # a tile a thread
    done = 0
    with threadpool_limits(1, user_api="blas"):  # each thread's tile on one core, no idle spinning
        floor = _floors(normed, k)
        for n, (first, second) in enumerate(rounds):
            take_tiles(normed, block_rows, first, second, heap_val, heap_idx, floor, buffers)
            if on_block is not None:
                now = vocab * (n + 1) // len(rounds)
                on_block(now - done)
                done = now
    sort_heaps(heap_val, heap_idx)
    # A row whose floor turned out too high (fewer than k entries at or above it) is done again in full.
    short = np.flatnonzero(heap_idx[:, -1] == NO_ENTRY)
    for at in range(0, len(short), _PICK_ROWS):
        rows = short[at : at + _PICK_ROWS]
        sims = normed[rows] @ normed.T
        sims[np.arange(len(rows)), rows] = -np.inf
        heap_idx[rows], heap_val[rows] = top_k_rows(sims, k)
    return heap_idx, heap_val


def _rounds(blocks: int) -> list[tuple[npt.NDArray[np.int64], npt.NDArray[np.int64]]]:
    """Every pair of blocks (I <= J) once, in rounds where no block appears twice: the diagonal
    tiles in one round, then the circle method (one block fixed, the others rotating)."""
    rounds = [(np.arange(blocks, dtype=np.int64), np.arange(blocks, dtype=np.int64))]
    seats = list(range(blocks)) + ([-1] if blocks % 2 else [])  # -1: a bye
    size = len(seats)
    for _ in range(size - 1):
        pairs = [(seats[n], seats[size - 1 - n]) for n in range(size // 2)]
        pairs = [(min(a, b), max(a, b)) for a, b in pairs if a >= 0 and b >= 0]
        if pairs:
            rounds.append((np.array([a for a, _ in pairs], np.int64), np.array([b for _, b in pairs], np.int64)))
        seats = [seats[0], seats[-1], *seats[1:-1]]
    return rounds


def _floors(normed: Matrix, k: int) -> Matrix:
    """A starting threshold for every row: the m-th largest similarity to a sample of S rows
    (every V/S-th), with m = 10 and S chosen so about 4k entries of a row are expected above it.
    Any threshold is safe (a row left short is done again in full); a good one spares the heaps
    almost every offer. Small vocabularies start from -inf: sampling would cost more than it saves."""
    vocab = normed.shape[0]
    nth = 10
    sample = -(-nth * vocab // (4 * k))
    floor = np.full(vocab, -np.inf, dtype=np.float32)
    if sample * 2 > vocab:
        return floor
    from widen.model.neighbour_kernel import nth_largest

    columns = np.arange(sample) * (vocab // sample)
    against = np.ascontiguousarray(normed[columns].T)
    own = np.full(vocab, -1, dtype=np.int64)
    own[columns] = np.arange(sample)  # an entry is not its own neighbour
    nth_largest(normed, against, nth, own, floor)
    return floor


def top_k_for_vector(normed: Matrix, vector: npt.ArrayLike, k: int) -> tuple[npt.NDArray[np.int32], Matrix]:
    """Exact search for one (already normalised) vector over all rows."""
    query = np.asarray(vector, dtype=np.float32).reshape(1, -1)
    sims = query @ normed.T
    idx, val = top_k_rows(sims, k)
    return idx[0], val[0]
