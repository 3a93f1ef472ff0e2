"""A day's query log replayed against the real server with wrk, beside /healthz in the same run.

The demo generator writes `query_log.jsonl` (`demo_postings/query_log.py`): 20,000 queries of one
day with a Zipf-like popularity, typed as seekers type them. wrk walks it in order with
`bench/replay.lua`. Each round starts a fresh server (an empty response cache, as at the start of
a day), warms it with 2 s of /healthz, then runs /healthz and the replay for the same time, the
order alternating between rounds; the figures are the medians of the rounds. The cache hit rate
is read from the server's own /metrics (prometheus-client's parser) around the replay.
"""

from __future__ import annotations

import json
import re
import statistics
import subprocess
from pathlib import Path
from typing import Any
from urllib.parse import urlencode

import httpx
from prometheus_client.parser import text_string_to_metric_families

from tests.live_server import live_server

__all__ = ["bench_traffic", "log_paths"]

LUA = Path(__file__).resolve().parent / "replay.lua"


def log_paths(log: Path, out: Path) -> tuple[Path, int, int]:
    """Write the log's requests as paths, one a line, in order. Returns (file, requests, distinct)."""
    queries = [json.loads(line)["q"] for line in log.read_text(encoding="utf-8").splitlines() if line.strip()]
    out.write_text("".join(f"/v1/expand?{urlencode({'q': q})}\n" for q in queries), encoding="utf-8")
    return out, len(queries), len(set(queries))


def _cache_counts(base: str) -> tuple[float, float]:
    hits = misses = 0.0
    for family in text_string_to_metric_families(httpx.get(f"{base}/metrics", timeout=10).text):
        for sample in family.samples:
            if sample.name == "widen_cache_hits_total":
                hits += sample.value
            elif sample.name == "widen_cache_misses_total":
                misses += sample.value
    return hits, misses


def _wrk(base: str, seconds: int, connections: int, threads: int, paths: Path | None) -> dict[str, Any]:
    """One wrk run: the replay with `paths`, else /healthz. Requests per second, latencies in ms, errors."""
    if paths is None:
        args = [f"{base}/healthz", "-s", str(LUA.with_name("latency.lua"))]
    else:
        args = [base, "-s", str(LUA), "--", str(paths), str(threads)]
    out = subprocess.run(
        ["wrk", f"-t{threads}", f"-c{connections}", f"-d{seconds}s", *args],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    found = re.search(r"^\{.*\}$", out, re.MULTILINE)
    if found is None:
        raise SystemExit(f"wrk printed no summary:\n{out}")
    line = json.loads(found.group(0))
    return {
        "rps": round(line["requests"] / line["seconds"], 1),
        "p50_ms": round(line["p50_us"] / 1000, 2),
        "p99_ms": round(line["p99_us"] / 1000, 2),
        "max_ms": round(line["max_us"] / 1000, 2),
        "errors": line["non_2xx"] + line["socket_errors"],
    }


def _round(store: Path, env: dict[str, str], paths: Path, first: str, seconds: int) -> dict[str, Any]:
    with live_server(store, env) as server:
        _wrk(server.base, 2, 32, 2, None)  # warm-up: imports, first requests, the threadpool
        got: dict[str, Any] = {}
        for side in (first, "replay" if first == "healthz" else "healthz"):
            if side == "replay":
                before = _cache_counts(server.base)
                got["replay"] = _wrk(server.base, seconds, 32, 2, paths)
                after = _cache_counts(server.base)
                hits, misses = after[0] - before[0], after[1] - before[1]
                got["hit_rate"] = round(hits / (hits + misses), 3) if hits + misses else 0.0
            else:
                got["healthz"] = _wrk(server.base, seconds, 32, 2, None)
    return got


def bench_traffic(store: Path, demo: Path, work: Path, rounds: int = 3, seconds: int = 8) -> dict[str, Any]:
    """The replayed log against /healthz, with the response cache at its default size and with it off."""
    paths, requests, distinct = log_paths(demo / "query_log.jsonl", work / "replay-paths.txt")
    results: dict[str, Any] = {"log": {"requests": requests, "distinct": distinct}}
    for label, env in (("cache default", {}), ("cache off", {"WIDEN_CACHE_SIZE": "0"})):
        runs = [_round(store, env, paths, "healthz" if n % 2 == 0 else "replay", seconds) for n in range(rounds)]
        ratios = [r["replay"]["rps"] / r["healthz"]["rps"] for r in runs]
        results[label] = {
            "ratio": round(statistics.median(ratios), 3),
            "replay_rps": statistics.median(r["replay"]["rps"] for r in runs),
            "healthz_rps": statistics.median(r["healthz"]["rps"] for r in runs),
            "p50_ms": statistics.median(r["replay"]["p50_ms"] for r in runs),
            "p99_ms": statistics.median(r["replay"]["p99_ms"] for r in runs),
            "worst_p99_ms": max(r["replay"]["p99_ms"] for r in runs),
            "max_ms": max(r["replay"]["max_ms"] for r in runs),
            "hit_rate": statistics.median(r["hit_rate"] for r in runs),
            "errors": sum(r["replay"]["errors"] + r["healthz"]["errors"] for r in runs),
            "rounds": runs,
        }
    results["targets"] = {"cache off ratio": ">= 0.7 (goal 0.9)", "cache default ratio": ">= 1.0", "p99_ms": "<= 25"}
    return results
