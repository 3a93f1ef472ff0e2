"""`python -m bench.walk --before COMMIT`: the uncached walk of a day's queries, this checkout against an
earlier commit, side by side, on the demo board and on a real-title board.

The walk is `bench.traffic`'s with the response cache off: a fresh server on one worker, /healthz
under wrk (32 connections) for 8 s and one pass of the board's day's log in order, the two in turns
(`bench.traffic._round`), so every query is worked out by the expansion code. Both versions serve
the same bundle; the versions take turns, `--rounds` each, in one run, and each version's figure
is the median of its rounds' ratios of the log's requests per second to /healthz's. The earlier
commit is checked out as a git worktree under the output folder and imported ahead of the installed
package (PYTHONPATH), as `bench.versus` does. The boards: the demo board (`build/demo`, its store
trained if missing) and the 20,000-posting real-title board of `make scale` (Fellhaven Jobs).

    python -m bench.walk --before e901bd3 --out build/walk
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from pathlib import Path
from typing import Any

from bench.common import ROOT, machine, widen_train
from bench.scale import _data
from bench.scale_parts import train_once
from bench.traffic import _round, log_paths
from bench.versus import checkout
from training.config import TrainConfig

__all__ = ["main"]


def _board(name: str, data: Path, store: Path, sources: dict[str, Path], rounds: int, out: Path) -> dict[str, Any]:
    paths, requests, distinct = log_paths(data / "query_log.jsonl", out / f"{name}-paths.txt")
    seen: dict[str, list[dict[str, Any]]] = {version: [] for version in sources}
    for turn in range(rounds):
        for version, source in sources.items():
            print(f"{name} round {turn + 1}: {version}", file=sys.stderr, flush=True)
            env = {"PYTHONPATH": str(source), "WIDEN_CACHE_SIZE": "0"}
            got = _round(store, env, paths, requests, "healthz" if turn % 2 == 0 else "replay", 8, cwd=source)
            seen[version].append(got)
    result: dict[str, Any] = {"log": {"requests": requests, "distinct": distinct}}
    for version, runs in seen.items():
        result[version] = {
            "ratio": round(statistics.median(r["replay"]["rps"] / r["healthz"]["rps"] for r in runs), 3),
            "replay_rps": statistics.median(r["replay"]["rps"] for r in runs),
            "healthz_rps": statistics.median(r["healthz"]["rps"] for r in runs),
            "p99_ms": statistics.median(r["replay"]["p99_ms"] for r in runs),
            "worst_p99_ms": max(r["replay"]["p99_ms"] for r in runs),
            "errors": sum(r["replay"]["errors"] + r["healthz"]["errors"] for r in runs),
            "whole_log_each_round": all(r["replay"].get("whole_log") for r in runs),
        }
    result["now_over_before"] = round(result["now"]["ratio"] / result["before"]["ratio"], 3)
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--before", required=True, help="the earlier commit")
    parser.add_argument("--demo", type=Path, default=ROOT / "build" / "demo")
    parser.add_argument("--scale", type=Path, default=ROOT / "build" / "scale", help="make scale's folder")
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "walk")
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    out = args.out.resolve()
    commit, before = checkout(args.before, out)
    sources = {"before": before, "now": ROOT}  # each server runs in its checkout (`_round`'s cwd)
    demo_store = out / "demo-store"
    if not (demo_store / "CURRENT").is_file():
        config = TrainConfig()
        config.gate.pairs = str(args.demo.resolve() / "pairs.tsv")
        (out / "demo.toml").write_text(config.to_toml(), encoding="utf-8")
        widen_train(args.demo / "postings.jsonl", demo_store, out / "demo.toml")
    real = _data(args.scale.resolve(), 20000)
    real_store = real.parent / "store"
    if not (real_store / "CURRENT").is_file():
        train_once(real / "postings.jsonl", real_store, {"gate.pairs": str(real / "pairs.tsv")})
    report: dict[str, Any] = {"machine": machine(), "date": time.strftime("%Y-%m-%d"), "before": commit}
    for name, data, store in (("demo", args.demo, demo_store), ("real titles 20k", real, real_store)):
        report[name] = _board(name.split(" ")[0], data.resolve(), store, sources, args.rounds, out)
        print(json.dumps(report[name]), file=sys.stderr, flush=True)
    (out / "walk.json").write_text(json.dumps(report, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(report, indent=2))


if __name__ == "__main__":
    main()
