"""A day's query log replayed against the real server with wrk, beside /healthz in the same run.

The demo generator writes `query_log.jsonl` (`demo_postings/query_log.py`): 20,000 queries of one
day with a Zipf-like popularity, typed as seekers type them. wrk walks it in order with
`bench/replay.lua`, once: each query of the log is sent once, so a cached answer is one the day
itself asked for before (the first pass is all a day has). Each round starts a fresh server (an
empty response cache, as at the start of a day), warms it with 2 s of /healthz, then runs /healthz
for 8 s and the one pass of the log, the order alternating between rounds; the figures are the
medians of the rounds. The pass's requests per second are its answers over its own time (the
script's clock, first request to last answer); this side polls the server's request count in
/metrics ten times a second and ends wrk once the whole log is answered. The cache hit rate is
read from the same /metrics (prometheus-client's parser) around the replay.
"""

from __future__ import annotations

import json
import re
import signal
import statistics
import subprocess
import time
from pathlib import Path
from typing import Any
from urllib.parse import urlencode

import httpx
from prometheus_client.parser import text_string_to_metric_families

from tests.live_server import live_server

__all__ = ["bench_traffic", "log_paths", "replay_loop"]

LUA = Path(__file__).resolve().parent / "replay.lua"
LATENCY = LUA.with_name("latency.lua")


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


def _summary(out: str) -> dict[str, Any]:
    found = re.search(r"^\{.*\}$", out, re.MULTILINE)
    if found is None:
        raise SystemExit(f"wrk printed no summary:\n{out}")
    line = json.loads(found.group(0))
    got = {
        "rps": round(line["requests"] / line["seconds"], 1),
        "p50_ms": round(line["p50_us"] / 1000, 2),
        "p99_ms": round(line["p99_us"] / 1000, 2),
        "max_ms": round(line["max_us"] / 1000, 2),
        "errors": line["non_2xx"] + line["socket_errors"],
    }
    if "whole_log" in line:
        got["requests"], got["seconds"], got["whole_log"] = line["requests"], line["seconds"], line["whole_log"]
    return got


def _healthz(base: str, seconds: int, connections: int, threads: int) -> dict[str, Any]:
    """wrk on /healthz for `seconds`: requests per second, latencies in ms, errors."""
    out = subprocess.run(
        ["wrk", f"-t{threads}", f"-c{connections}", f"-d{seconds}s", f"{base}/healthz", "-s", str(LATENCY)],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    return _summary(out)


def _expand_requests(base: str) -> float:
    """How many /v1/expand requests the server has answered (any status), from its /metrics."""
    total = 0.0
    for family in text_string_to_metric_families(httpx.get(f"{base}/metrics", timeout=10).text):
        for sample in family.samples:
            if sample.name == "widen_requests_total" and sample.labels.get("route") == "/v1/expand":
                total += sample.value
    return total


def _replay_once(base: str, connections: int, threads: int, paths: Path, requests: int) -> dict[str, Any]:
    """One pass of the log with wrk and `replay.lua`; wrk is ended once the server has answered it all."""
    before = _expand_requests(base)
    wrk = subprocess.Popen(
        ["wrk", f"-t{threads}", f"-c{connections}", "-d600s", base, "-s", str(LUA), "--", str(paths), str(threads)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    deadline = time.monotonic() + 600
    while wrk.poll() is None and time.monotonic() < deadline:
        if _expand_requests(base) - before >= requests:
            break
        time.sleep(0.1)  # polling the server's count, not waiting a fixed time
    if wrk.poll() is None:
        wrk.send_signal(signal.SIGINT)  # wrk stops and prints its summary
    out, err = wrk.communicate(timeout=60)
    if wrk.returncode not in (0, -signal.SIGINT):
        raise SystemExit(f"wrk failed ({wrk.returncode}): {err}")
    return _summary(out)


def _round(
    store: Path, env: dict[str, str], paths: Path, requests: int, first: str, seconds: int, cwd: Path | None = None
) -> dict[str, Any]:
    with live_server(store, env, cwd=cwd) as server:
        _healthz(server.base, 2, 32, 2)  # warm-up: imports, first requests, the threadpool
        got: dict[str, Any] = {}
        for side in (first, "replay" if first == "healthz" else "healthz"):
            if side == "replay":
                before = _cache_counts(server.base)
                got["replay"] = _replay_once(server.base, 32, 2, paths, requests)
                after = _cache_counts(server.base)
                hits, misses = after[0] - before[0], after[1] - before[1]
                got["hit_rate"] = round(hits / (hits + misses), 3) if hits + misses else 0.0
            else:
                got["healthz"] = _healthz(server.base, seconds, 32, 2)
    return got


def bench_traffic(store: Path, demo: Path, work: Path, rounds: int = 3, seconds: int = 8) -> dict[str, Any]:
    """The replayed log against /healthz, with the response cache at its default size and with it off."""
    paths, requests, distinct = log_paths(demo / "query_log.jsonl", work / "replay-paths.txt")
    results: dict[str, Any] = {"log": {"requests": requests, "distinct": distinct}}
    for label, env in (("cache default", {}), ("cache off", {"WIDEN_CACHE_SIZE": "0"})):
        runs = [
            _round(store, env, paths, requests, "healthz" if n % 2 == 0 else "replay", seconds) for n in range(rounds)
        ]
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
            "whole_log_each_round": all(r["replay"].get("whole_log") for r in runs),
            "errors": sum(r["replay"]["errors"] + r["healthz"]["errors"] for r in runs),
            "rounds": runs,
        }
    results["targets"] = {"cache off ratio": ">= 0.7 (goal 0.9)", "cache default ratio": ">= 1.0", "p99_ms": "<= 25"}
    return results


def replay_loop(base: str, seconds: float, paths: Path, connections: int = 16) -> dict[str, Any]:
    """wrk replaying `paths` round and round for `seconds` (bench/replay.lua): requests, failures, latencies."""
    command = ["wrk", "-t2", f"-c{connections}", f"-d{max(1, round(seconds))}s", "-s", str(LUA), base]
    out = subprocess.run(
        [*command, "--", str(paths), "2", "loop"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    line = json.loads(next(x for x in out.splitlines() if x.startswith("{")))
    return {
        "requests": line["requests"],
        "failed": line["non_2xx"] + line["socket_errors"],
        "non_2xx": line["non_2xx"],
        "socket_errors": {k: line[k] for k in ("connect", "read", "write", "timeout")},
        "p50_ms": round(line["p50_us"] / 1000, 2),
        "p99_ms": round(line["p99_us"] / 1000, 2),
        "max_ms": round(line["max_us"] / 1000, 2),
    }
