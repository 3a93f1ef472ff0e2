"""The real server on 127.0.0.1 under wrk: /healthz against /v1/expand, and memory of 1 and 2 workers."""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path
from typing import Any

from tests.live_server import live_server

__all__ = ["bench_server"]


def _wrk(url: str, seconds: int = 10, connections: int = 32) -> dict[str, Any]:
    out = subprocess.run(
        ["wrk", "-t2", f"-c{connections}", f"-d{seconds}s", "--latency", url],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    rps = float(re.search(r"Requests/sec:\s+([\d.]+)", out).group(1))  # type: ignore[union-attr]

    def ms(label: str) -> float:
        found = re.search(rf"{label}%\s+([\d.]+)(us|ms|s)", out)
        value, unit = float(found.group(1)), found.group(2)  # type: ignore[union-attr]
        return round(value / 1000 if unit == "us" else value * 1000 if unit == "s" else value, 2)

    errors = sum(int(n) for n in re.findall(r"Non-2xx or 3xx responses: (\d+)", out))
    errors += sum(int(n) for n in re.findall(r"(?:connect|read|write|timeout) (\d+)", out))
    return {"rps": round(rps, 1), "p50_ms": ms("50"), "p99_ms": ms("99"), "errors": errors}


def _pss_kib(pid: int) -> int:
    """Proportional set size of a process and its children: shared pages split among sharers."""
    import psutil

    total = 0
    for proc in [psutil.Process(pid), *psutil.Process(pid).children(recursive=True)]:
        for line in Path(f"/proc/{proc.pid}/smaps_rollup").read_text().splitlines():
            if line.startswith("Pss:"):
                total += int(line.split()[1])
    return total


def bench_server(store: Path) -> dict[str, Any]:
    """The real server on 127.0.0.1 under wrk (32 connections): /healthz against /v1/expand, and memory."""
    import httpx

    if shutil.which("wrk") is None:
        raise SystemExit("wrk is needed for the server benchmark: apt-get install wrk")
    query = "/v1/expand?q=night+shift+staff+nurse+hensby"
    results: dict[str, Any] = {}
    for label, env in (("cache on", {}), ("cache off", {"WIDEN_CACHE_SIZE": "0"})):
        with live_server(store, env) as server:
            base = server.base
            _wrk(f"{base}/healthz", 3)  # warm up
            rounds = [(_wrk(f"{base}/healthz", 6), _wrk(f"{base}{query}", 6)) for _ in range(3)]  # interleaved
        health = sorted((h for h, _ in rounds), key=lambda r: r["rps"])[1]
        expand = sorted((e for _, e in rounds), key=lambda r: r["rps"])[1]
        results[label] = {
            "healthz": health,
            "expand": expand,
            "ratio": round(expand["rps"] / health["rps"], 3),
            "rounds": [[h["rps"], e["rps"]] for h, e in rounds],
            "worst_p99_ms": max(e["p99_ms"] for _, e in rounds),
            "errors": sum(h["errors"] + e["errors"] for h, e in rounds),
        }
    memory = {}
    for workers in (1, 2):
        with live_server(store, args=("--workers", str(workers))) as server:
            for _ in range(200):
                httpx.get(f"{server.base}{query}")
            memory[workers] = _pss_kib(server.process.pid)
    results["memory_pss_mib"] = {str(k): round(v / 1024, 1) for k, v in memory.items()}
    results["memory_ratio_2_to_1"] = round(memory[2] / memory[1], 3)
    results["targets"] = {"ratio": ">= 0.7", "p99_ms": "<= 25", "errors": 0, "memory_ratio_2_to_1": "<= 1.3"}
    return results
