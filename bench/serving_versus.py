"""`python -m bench.serving_versus --before COMMIT`: a large bundle served by this checkout and by an
earlier commit, side by side: time to ready, RSS and PSS with 1 and 2 workers after 200 of the day's
queries (`--rounds` turns each), then PSS as the whole day's log goes through 1 and 2 workers.

The measures are `make scale`'s (`bench.scale_parts.serving` and `through_the_day`, the service's
default prepared entries); what this adds is the earlier commit beside this one on the same bundle,
taking turns, so that a change to what a server prepares or keeps is read as a ratio of one run.
The earlier commit is a git worktree under the output folder (`bench.versus.checkout`); each server
runs in its own checkout.
The bundle is the million-posting real-title board's of `make scale` unless `--store` names one.

    python -m bench.serving_versus --before 4979e12 --out build/serving_versus
"""

from __future__ import annotations

import argparse
import json
import time
from pathlib import Path
from typing import Any

from bench.common import ROOT, machine
from bench.scale_parts import serving, through_the_day
from bench.versus import checkout
from service.settings import Settings

__all__ = ["main"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--before", required=True, help="the earlier commit")
    parser.add_argument("--store", type=Path, default=ROOT / "build" / "scale" / "1000000" / "store")
    parser.add_argument("--log", type=Path, default=None, help="the day's log (default: beside the store)")
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "serving_versus")
    parser.add_argument("--rounds", type=int, default=2)
    args = parser.parse_args()
    store = args.store.resolve()
    log = args.log or store.parent / "data" / "query_log.jsonl"
    day = [json.loads(line)["q"] for line in log.read_text(encoding="utf-8").splitlines() if line.strip()]
    commit, before = checkout(args.before, args.out.resolve())
    sources = {"before": before, "now": ROOT}
    prepared = Settings.model_fields["prepare_entries"].default
    report: dict[str, Any] = {"machine": machine(), "date": time.strftime("%Y-%m-%d"), "before": commit}
    for version in sources:
        report[version] = {"ready": []}
    for _ in range(args.rounds):  # the versions in turns
        for version, source in sources.items():
            report[version]["ready"].append(serving(store, prepared, day[:200], source))
    for version, source in sources.items():
        report[version]["day"] = through_the_day(store, log, prepared, source=source)
    args.out.mkdir(parents=True, exist_ok=True)
    (args.out / "serving_versus.json").write_text(json.dumps(report, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(report, indent=2))


if __name__ == "__main__":
    main()
