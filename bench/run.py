"""`make bench`: speed and memory figures, each a ratio measured side by side in one run.

Absolute times on a shared 2-core machine are noisy; a ratio of two things timed in the
same run, alternating, is not. Results go to OUT/results.json and a Markdown table on stdout,
which is what the README's benchmark section is copied from.

    python -m bench.run --demo build/demo --out build/bench
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

from bench.common import ROOT, machine, widen_train
from bench.expansion import bench_expansion
from bench.neighbours import bench_neighbours
from bench.server import bench_server
from bench.traffic import bench_traffic
from bench.training import bench_memory, bench_pipeline
from training.config import TrainConfig

__all__ = ["main"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--demo", type=Path, default=ROOT / "build" / "demo")
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "bench")
    parser.add_argument(
        "--only", nargs="*", default=None, help="sections: pipeline neighbours memory expansion server traffic"
    )
    args = parser.parse_args()
    args.demo, args.out = args.demo.resolve(), args.out.resolve()
    args.out.mkdir(parents=True, exist_ok=True)
    config_path = args.out / "bench.toml"
    config = TrainConfig()
    config.gate.pairs = str(args.demo / "pairs.tsv")
    config_path.write_text(config.to_toml(), encoding="utf-8")
    results: dict[str, Any] = {"machine": machine(), "date": time.strftime("%Y-%m-%d")}
    wanted = set(args.only or ["pipeline", "neighbours", "memory", "expansion", "server", "traffic"])
    with tempfile.TemporaryDirectory(prefix="widen-bench-") as tmp:
        work = Path(tmp)
        if "pipeline" in wanted:
            print("pipeline overhead ...", file=sys.stderr)
            results["pipeline"] = bench_pipeline(args.demo, work, config_path)
        if "neighbours" in wanted:
            print("neighbour table ...", file=sys.stderr)
            store = work / "nbr-store"
            widen_train(args.demo / "postings.jsonl", store, config_path)
            results["neighbours"] = bench_neighbours(store)
        if "expansion" in wanted:
            print("expansion ...", file=sys.stderr)
            store = work / "exp-store"
            widen_train(args.demo / "postings.jsonl", store, config_path)
            results["expansion"] = bench_expansion(store, args.demo)
        if "server" in wanted:
            print("server under wrk ...", file=sys.stderr)
            store = work / "srv-store"
            widen_train(args.demo / "postings.jsonl", store, config_path)
            results["server"] = bench_server(store)
        if "traffic" in wanted:
            print("a day's query log replayed under wrk ...", file=sys.stderr)
            store = work / "log-store"
            widen_train(args.demo / "postings.jsonl", store, config_path)
            results["traffic"] = bench_traffic(store, args.demo, work)
        if "memory" in wanted:
            print("memory 1x / 4x ...", file=sys.stderr)
            results["memory"] = bench_memory(args.demo, work, config_path)
    (args.out / "results.json").write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(results, indent=2))


if __name__ == "__main__":
    main()
