"""What every benchmark shares: the machine it ran on, a timed `widen train`, medians."""

from __future__ import annotations

import contextlib
import os
import platform
import statistics
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

__all__ = ["ROOT", "machine", "widen_train", "median_us", "settle"]


def machine() -> str:
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    mem = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
    return (
        f"{os.cpu_count()} cores ({cpu}), {mem:.0f} GiB, Python {platform.python_version()}, {platform.system()}"
        f"; BLAS: {blas()}"
    )


def _helper_cpu_ns() -> int:
    """CPU time so far of this process's threads other than the calling one (schedstat, ns)."""
    me = threading.get_native_id()
    total = 0
    for task in Path("/proc/self/task").iterdir():
        if int(task.name) == me:
            continue
        with contextlib.suppress(OSError, ValueError, IndexError):  # the thread ended meanwhile
            total += int((task / "schedstat").read_text().split()[0])
    return total


def settle(deadline_s: float = 3.0) -> bool:
    """Wait until this process's helper threads are idle (under 5% of a core over 20 ms).

    A BLAS thread pool keeps its threads spinning for a while after each call (OpenBLAS spins
    before it sleeps). The side of a ratio timed next would share the cores with them, so
    each side starts from a quiet process. Polls until quiet or the deadline; False if never
    quiet (or /proc has no per-thread schedstat)."""
    if not Path("/proc/self/task").is_dir():
        return False
    end = time.monotonic() + deadline_s
    while time.monotonic() < end:
        before = _helper_cpu_ns()
        time.sleep(0.02)
        if _helper_cpu_ns() - before < 1_000_000:
            return True
    return False


def blas() -> str:
    """The BLAS numpy calls, its version, kernel and threads, as threadpoolctl reports them."""
    import numpy  # noqa: F401  (loads the BLAS, which threadpoolctl only sees once loaded)
    from threadpoolctl import threadpool_info

    pools = [p for p in threadpool_info() if p.get("user_api") == "blas"]
    return (
        ", ".join(
            f"{p.get('internal_api')} {p.get('version')} ({p.get('architecture')}, {p.get('num_threads')} threads)"
            for p in pools
        )
        or "none found"
    )


def widen_train(corpus: Path, store: Path, config: Path) -> float:
    started = time.perf_counter()
    subprocess.run(
        [
            sys.executable,
            "-m",
            "widen.cli",
            "train",
            "--corpus",
            str(corpus),
            "--store",
            str(store),
            "--config",
            str(config),
        ],
        check=True,
        cwd=ROOT,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    return time.perf_counter() - started


def median_us(fn: Callable[[], object], runs: int) -> float:
    times = []
    for _ in range(runs):
        started = time.perf_counter()
        fn()
        times.append(time.perf_counter() - started)
    return round(statistics.median(times) * 1e6, 1)
