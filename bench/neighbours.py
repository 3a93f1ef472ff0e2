"""The neighbour table against the floor of any exact method: the bare blocked product V @ V.T.

The floor is the whole product `V @ V.T` in row blocks written into one reused buffer, at the
fastest of a few block sizes, with nothing picked (an exact method that computes every
similarity once can do no less, the target said). It is not the lowest floor: the whole product
writes V x V similarities to memory, while the table computes half of them into tiles a core's
cache holds. `bench.neighbour_floor.bare_triangle` times that half alone, tiled as the table tiles
it, and its ratio is reported beside the first (the target's figure kept). The sides are timed in
turns (each first in turn, after a warm-up round, each started once the last one's BLAS threads
have stopped spinning), median of the rounds. The table is checked against a full sort of every similarity for sampled
rows (identical indices wherever the similarities are not tied within float rounding) and
against gensim's `most_similar` on the demo bundle. The scale run builds the table for 200,000
random 100-dimensional entries in a separate process and reports its time and peak memory above
the arrays it holds (the vectors and the k-wide outputs), against one 2,048-row block's size.
"""

from __future__ import annotations

import json
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from bench.common import settle
from bench.neighbour_floor import bare_triangle
from widen.model.neighbours import normalise_rows, top_k_table
from widen.model.store import Store

__all__ = ["bench_neighbours", "bare_blocked_product", "check_against_full_sort", "fastest_bare_product"]


#: Row-block sizes the floor is timed at; the fastest is the floor (a block too small keeps BLAS
#: from its best speed, one too large writes more memory than the caches hold).
FLOOR_BLOCKS = (256, 512, 1024, 2048)


def bare_blocked_product(normed: npt.NDArray[np.float32], block_rows: int = 2048) -> float:
    """Seconds for the blocked products `V[block] @ V.T` alone, written into one reused buffer."""
    buffer = np.empty((min(block_rows, normed.shape[0]), normed.shape[0]), dtype=np.float32)
    started = time.perf_counter()
    for start in range(0, normed.shape[0], block_rows):
        stop = min(start + block_rows, normed.shape[0])
        np.matmul(normed[start:stop], normed.T, out=buffer[: stop - start])
    return time.perf_counter() - started


def fastest_bare_product(normed: npt.NDArray[np.float32]) -> tuple[float, int]:
    """The floor of any exact table: the full product at the fastest block size (seconds, block rows)."""
    return min((bare_blocked_product(normed, rows), rows) for rows in FLOOR_BLOCKS)


def check_against_full_sort(
    normed: npt.NDArray[np.float32], idx: npt.NDArray[np.int32], sims: npt.NDArray[np.float32], rows: list[int]
) -> dict[str, Any]:
    """For each sampled row: the reference order is a full sort (similarity descending, index ascending,
    itself left out). Indices must agree except where two similarities are within float rounding."""
    k = idx.shape[1]
    worst = 0.0
    differing = 0
    for i in rows:
        full = normed @ normed[i]
        full[i] = -np.inf
        order = np.lexsort((np.arange(len(full)), -full))[:k]
        worst = max(worst, float(np.max(np.abs(full[order] - sims[i]))))
        for a, b in zip(order.tolist(), idx[i].tolist(), strict=True):
            if a != b and abs(float(full[a]) - float(full[b])) > 1e-6:
                differing += 1
    return {"rows_checked": len(rows), "indices_differing_beyond_ties": differing, "max_similarity_diff": worst}


def _timed_rounds(normed: npt.NDArray[np.float32], k: int, rounds: int) -> dict[str, Any]:
    top_k_table(normed[: min(len(normed), 4096)], k)  # warm-up: BLAS threads, allocator, compiled code
    bare_blocked_product(normed[: min(len(normed), 4096)])
    bare_triangle(normed[: min(len(normed), 4096)])
    sides: dict[str, list[float]] = {"table": [], "bare": [], "triangle": []}
    blocks = []
    for n in range(rounds):
        order = ["table", "bare", "triangle"]
        for side in order[n % 3 :] + order[: n % 3]:  # each side first in turn
            settle()  # the last side's BLAS threads stop spinning before this side starts
            if side == "table":
                started = time.perf_counter()
                top_k_table(normed, k)
                sides["table"].append(time.perf_counter() - started)
            elif side == "bare":
                seconds, rows = fastest_bare_product(normed)
                sides["bare"].append(seconds)
                blocks.append(rows)
            else:
                sides["triangle"].append(bare_triangle(normed))
    table, bare, triangle = (statistics.median(sides[s]) for s in ("table", "bare", "triangle"))
    return {
        "entries": len(normed),
        "top_k": k,
        "table_s": round(table, 3),
        "bare_blocked_product_s": round(bare, 3),
        "ratio": round(table / bare, 3),
        "bare_triangle_s": round(triangle, 3),
        "ratio_to_triangle": round(table / triangle, 3),
        "bare_fastest_block_rows": blocks,
        "rounds": [[round(sides[s][n], 3) for s in ("table", "bare", "triangle")] for n in range(rounds)],
    }


def _against_most_similar(wv: Any, idx: npt.NDArray[np.int32], sims: npt.NDArray[np.float32], k: int) -> bool:
    for i, key in enumerate(wv.index_to_key):
        ref = wv.most_similar(key, topn=k)
        if not np.allclose([s for _, s in ref], sims[i], atol=1e-5):
            return False
    return True


def _scale_run(entries: int, dims: int, k: int) -> dict[str, Any]:
    """Run in a fresh process (python -m bench.neighbours --scale N): time and peak memory of one table."""
    rng = np.random.default_rng(0)
    normed = normalise_rows(rng.normal(size=(entries, dims)).astype(np.float32))
    out_bytes = entries * k * 8  # int32 indices + float32 similarities
    # The process's peak resident size is a high-water mark, and making the vectors (in float64
    # first) set it higher than a small table reaches: it is reset here (Linux: writing 5 to
    # /proc/self/clear_refs resets VmHWM, proc(5)), so the peak read after is the table's own.
    # Loading the compiled top-k code and the BLAS buffers costs the same for any table: a
    # 1,000-entry table first, its peak reported apart, so the peak of the big one is what grows.
    reset = _reset_peak()
    loaded = _status_kib("VmRSS") if reset else 0
    top_k_table(normed[:1000], k)
    once_mib = (_status_kib("VmHWM") - loaded) / 1024 if reset else None
    reset = reset and _reset_peak()
    before = _status_kib("VmRSS") * 1024 if reset else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    started = time.perf_counter()
    idx, sims = top_k_table(normed, k)
    seconds = time.perf_counter() - started
    peak = _status_kib("VmHWM") * 1024 if reset else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    block = 2048 * entries * 4
    sample = [int(i) for i in rng.choice(entries, 20, replace=False)]
    return {
        "entries": entries,
        "dims": dims,
        "top_k": k,
        "table_s": round(seconds, 1),
        "peak_above_vectors_mib": round((peak - before) / 2**20, 1),
        "outputs_mib": round(out_bytes / 2**20, 1),
        "one_block_mib": round(block / 2**20, 1),
        "within_outputs_plus_one_block": peak - before <= out_bytes + block,
        "peak_reset_before_the_table": reset,
        "loading_once_mib": None if once_mib is None else round(once_mib, 1),
        "check": check_against_full_sort(normed, idx, sims, sample),
    }


def _reset_peak() -> bool:
    try:
        Path("/proc/self/clear_refs").write_text("5")
    except OSError:
        return False
    return True


def _status_kib(field: str) -> int:
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith(field + ":"):
            return int(line.split()[1])
    raise RuntimeError(f"no {field} in /proc/self/status")


def bench_neighbours(store: Path, rounds: int = 3, scale: int = 200_000) -> dict[str, Any]:
    """The table against the bare blocked product on the demo bundle and 20,000 random entries, and a scale run."""
    bundle = Store(store).open_bundle()
    demo = normalise_rows(bundle.vectors.vectors)
    rng = np.random.default_rng(0)
    synthetic = normalise_rows(rng.normal(size=(20_000, 100)).astype(np.float32))
    results: dict[str, Any] = {}
    for name, normed in (("demo", demo), ("synthetic_20000", synthetic)):
        results[name] = _timed_rounds(normed, 50, rounds)
        idx, sims = top_k_table(normed, 50)
        rows = [int(i) for i in rng.choice(len(normed), min(300, len(normed)), replace=False)]
        results[name]["check"] = check_against_full_sort(normed, idx, sims, rows)
        if name == "demo":
            results[name]["identical_to_gensim_most_similar"] = _against_most_similar(bundle.vectors, idx, sims, 50)
    if scale:
        done = subprocess.run(
            [sys.executable, "-m", "bench.neighbours", "--scale", str(scale)],
            capture_output=True,
            text=True,
            check=True,
        )
        results["scale"] = json.loads(done.stdout)
    results["targets"] = {"ratio": "<= 1.1", "indices_differing_beyond_ties": 0, "scale peak": "<= outputs + one block"}
    return results


if __name__ == "__main__":
    print(json.dumps(_scale_run(int(sys.argv[sys.argv.index("--scale") + 1]), 100, 50)))
