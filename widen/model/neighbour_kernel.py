"""Compiled pieces of the neighbour table (numba): keeping each row's k best as similarities stream in.

Each row owns a binary heap of k (similarity, index) pairs with its worst pair on top, held in
the output arrays themselves, so the table needs no memory beyond its outputs, a tile a thread
and a threshold a row. "Worse" is lower similarity, and at equal similarity the higher index:
the order a full sort by similarity descending, then index ascending, gives; with that order
the heaps keep the exact top k whatever order the similarities arrive in. A row's bar is the
larger of its `floor` (a first guess, see `widen.model.neighbours._floors`) and its heap's worst;
almost every similarity is below the bar and is rejected by one vectorised test per run of
columns, so a heap is touched a few dozen times a row, not once per entry.

`take_tiles` consumes tiles (I, J), I <= J, of the upper triangle of `V @ V.T`: each tile row is
offered to the row it stands for and each tile column to the entry it stands for (the product is
symmetric), so every pair of entries is multiplied once and offered to both.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import numpy.typing as npt
from numba import get_thread_id, njit, prange  # type: ignore[attr-defined]

__all__ = ["take_tiles", "product_tile", "sort_heaps", "nth_largest", "NO_ENTRY"]

#: The index of an empty heap slot (paired with similarity -inf): worse than any real entry.
NO_ENTRY = np.iinfo(np.int32).max

# Columns compared at once before any is looked at one by one: one or two vector registers.
_RUN = 16
# No "ninf": -inf marks an empty slot and must compare as such.
_FAST = {"nnan", "nsz", "reassoc", "arcp", "contract"}


@njit(inline="always", cache=True)
def _worse(va: float, ia: int, vb: float, ib: int) -> bool:
    return va < vb or (va == vb and ia > ib)


@njit(inline="always", cache=True)
def _sift_down(hv: npt.NDArray[np.float32], hi: npt.NDArray[np.int32], size: int, pos: int) -> None:
    while True:
        child = 2 * pos + 1
        if child >= size:
            return
        right = child + 1
        if right < size and _worse(hv[right], hi[right], hv[child], hi[child]):
            child = right
        if not _worse(hv[child], hi[child], hv[pos], hi[pos]):
            return
        hv[pos], hv[child] = hv[child], hv[pos]
        hi[pos], hi[child] = hi[child], hi[pos]
        pos = child


@njit(inline="always", cache=True)
def _offer(hv: npt.NDArray[np.float32], hi: npt.NDArray[np.int32], value: Any, index: int) -> Any:
    """Put (value, index) in place of the heap's worst if it is better; the new worst similarity."""
    if not _worse(hv[0], hi[0], value, index):
        return hv[0]
    hv[0] = value
    hi[0] = index
    _sift_down(hv, hi, hv.shape[0], 0)
    return hv[0]


@njit(inline="always", cache=True, fastmath=_FAST)
def _tile_pass(
    tile: npt.NDArray[np.float32],
    rows_at: int,
    cols_at: int,
    heap_val: npt.NDArray[np.float32],
    heap_idx: npt.NDArray[np.int32],
    floor: npt.NDArray[np.float32],
    diagonal: bool,
) -> None:
    """Offer tile row r to entry rows_at+r's heap and, off the diagonal, tile column c to entry
    cols_at+c's heap (the product is symmetric: column c is that entry's similarities to the
    tile's rows). One read of the tile: each run of columns is tested against the lower of the
    row's bar and each column's bar in one vectorised comparison; only a run with a hit is
    looked at entry by entry."""
    height, width = tile.shape
    bars = np.empty(width, dtype=np.float32)
    for c in range(width):
        bars[c] = np.inf if diagonal else max(floor[cols_at + c], heap_val[cols_at + c, 0])
    runs = (width + _RUN - 1) // _RUN
    lows = np.empty(runs, dtype=np.float32)  # the lowest column bar of each run
    for j in range(runs):
        lows[j] = bars[j * _RUN : (j + 1) * _RUN].min()
    whole = width // _RUN
    for r in range(height):
        row = tile[r]
        me = rows_at + r
        hv, hi = heap_val[me], heap_idx[me]
        bar = max(floor[me], hv[0])
        for j in range(runs):
            c = j * _RUN
            if j < whole:
                top = row[c]
                for q in range(1, _RUN):
                    v = row[c + q]
                    top = v if v > top else top
                if top < bar and top < lows[j]:
                    continue
            for q in range(c, min(c + _RUN, width)):
                v = row[q]
                if v >= bar and not (diagonal and q == r):
                    bar = max(floor[me], _offer(hv, hi, v, cols_at + q))
                if v >= bars[q]:
                    other = cols_at + q
                    bars[q] = max(floor[other], _offer(heap_val[other], heap_idx[other], v, me))
                    lows[j] = bars[c : min(c + _RUN, width)].min()


@njit(parallel=True, cache=True, fastmath=_FAST)
def take_tiles(
    normed: npt.NDArray[np.float32],
    tile_rows: int,
    first_blocks: npt.NDArray[np.int64],
    second_blocks: npt.NDArray[np.int64],
    heap_val: npt.NDArray[np.float32],
    heap_idx: npt.NDArray[np.int32],
    floor: npt.NDArray[np.float32],
    buffers: npt.NDArray[np.float32],
) -> None:
    """Tiles (I, J), I <= J, of `V @ V.T`, none sharing a block with another (so no two threads
    touch one heap): each tile's product (one BLAS call, one thread) is offered by rows to block
    I and, unless I == J, by columns to block J, while it is still in the core's cache."""
    for t in prange(first_blocks.shape[0]):
        i, j = first_blocks[t], second_blocks[t]
        tile = product_tile(normed, tile_rows, i, j, buffers)
        _tile_pass(tile, i * tile_rows, j * tile_rows, heap_val, heap_idx, floor, i == j)


@njit(inline="always", cache=True)
def product_tile(
    normed: npt.NDArray[np.float32], tile_rows: int, i: int, j: int, buffers: npt.NDArray[np.float32]
) -> npt.NDArray[np.float32]:
    """Tile (i, j) of `V @ V.T`, one BLAS call, in the calling thread's own buffer: a new array a tile
    would be mapped and unmapped every time (page faults, and the other core's TLB flushed)."""
    vocab = normed.shape[0]
    a0, a1 = i * tile_rows, min((i + 1) * tile_rows, vocab)
    b0, b1 = j * tile_rows, min((j + 1) * tile_rows, vocab)
    tile = buffers[get_thread_id()].reshape(-1)[: (a1 - a0) * (b1 - b0)].reshape((a1 - a0, b1 - b0))
    np.dot(normed[a0:a1], normed[b0:b1].T, tile)
    return tile  # type: ignore[no-any-return]  # numba-typed reshape


@njit(parallel=True, cache=True)
def sort_heaps(heap_val: npt.NDArray[np.float32], heap_idx: npt.NDArray[np.int32]) -> None:
    """Turn every row's heap, in place, into its entries by similarity descending, then index ascending."""
    rows, k = heap_val.shape
    for r in prange(rows):
        hv, hi = heap_val[r], heap_idx[r]
        for end in range(k - 1, 0, -1):  # the worst left goes to the back
            hv[0], hv[end] = hv[end], hv[0]
            hi[0], hi[end] = hi[end], hi[0]
            _sift_down(hv, hi, end, 0)


@njit(parallel=True, cache=True, fastmath=_FAST)
def nth_largest(
    normed: npt.NDArray[np.float32],
    sample: npt.NDArray[np.float32],
    nth: int,
    own: npt.NDArray[np.int64],
    out: npt.NDArray[np.float32],
) -> None:
    """out[r] = the nth largest similarity of row r to the sample's rows (`sample` is their
    transpose), leaving out sample column own[r] (-1: none); a few hundred rows a thread at a time."""
    rows = normed.shape[0]
    chunk = 256
    for n in prange((rows + chunk - 1) // chunk):
        a0, a1 = n * chunk, min((n + 1) * chunk, rows)
        sims = np.dot(normed[a0:a1], sample)
        for r in range(a1 - a0):
            row = sims[r]
            best = np.full(nth, -np.inf, dtype=np.float32)  # ascending: best[0] is the nth largest so far
            for c in range(row.shape[0]):
                v = row[c]
                if v <= best[0] or c == own[a0 + r]:
                    continue
                p = 0
                while p + 1 < nth and best[p + 1] < v:
                    best[p] = best[p + 1]
                    p += 1
                best[p] = v
            out[a0 + r] = best[0]
