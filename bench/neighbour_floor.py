"""A lower floor for the neighbour table: every similarity of `V @ V.T` computed once, nothing picked.

The upper triangle in square tiles, each tile one BLAS call on one core written into that core's own
buffer (so it stays in the core's cache), the tiles in the same rounds the table runs them in
(`widen.model.neighbours._rounds`). This is the table's own arithmetic and memory traffic without
its keeper: what any exact method that multiplies each pair once cannot go below on this machine.
"""

from __future__ import annotations

import time

import numpy as np
import numpy.typing as npt
from numba import get_num_threads, njit, prange  # type: ignore[attr-defined]
from threadpoolctl import threadpool_limits

from widen.model.neighbour_kernel import product_tile
from widen.model.neighbours import _rounds

__all__ = ["bare_triangle"]


@njit(parallel=True, cache=True)
def _tiles(
    normed: npt.NDArray[np.float32],
    tile_rows: int,
    first: npt.NDArray[np.int64],
    second: npt.NDArray[np.int64],
    buffers: npt.NDArray[np.float32],
) -> float:
    touched = 0.0
    for t in prange(first.shape[0]):
        touched += product_tile(normed, tile_rows, first[t], second[t], buffers)[0, 0]  # read back
    return touched


def bare_triangle(normed: npt.NDArray[np.float32], tile_rows: int = 512) -> float:
    """Seconds for the upper triangle of `V @ V.T` in tiles of `tile_rows` (the table's default), as above."""
    normed = np.ascontiguousarray(normed, dtype=np.float32)
    tile_rows = min(tile_rows, normed.shape[0])
    rounds = _rounds(-(-normed.shape[0] // tile_rows))
    buffers = np.empty((get_num_threads(), tile_rows, tile_rows), dtype=np.float32)
    with threadpool_limits(1, user_api="blas"):
        started = time.perf_counter()
        for first, second in rounds:
            _tiles(normed, tile_rows, first, second, buffers)
        return time.perf_counter() - started
