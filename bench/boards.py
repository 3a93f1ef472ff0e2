"""`make evaluate`: widen on both demo boards at full size, as a team would measure it on its own.

For each board: generate the dump (20,000 postings, seed 7), train a bundle with the default
config (the board's own gate pairs); when the gate refuses it, serve it anyway with `--force`
(the figures say how good it is, which is the point) and record that; run `widen evaluate` with
every method on the open postings (the last 7 days), and again on windows of 7, 14, 30 and 60
days for the curve; score the expansions against the board's truth. Thresholds and defaults were
chosen on Tollbridge Valley; Oxmere Bay is where they are reported.

    python -m bench.boards --out build/eval [--postings 20000] [--seed 7]
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

from bench.common import ROOT, machine
from demo_postings.generate import BOARD_NAMES, generate
from widen.evaluation.scorecard import scorecard
from widen.expansion.lexicon import Lexicon
from widen.model.store import Store

__all__ = ["main", "prepare", "board"]

WINDOWS = "7,14,30,60"


def _widen(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "widen.cli", *args], cwd=ROOT, capture_output=True, text=True, check=False
    )


def prepare(name: str, out: Path, postings: int, seed: int) -> tuple[Path, Path, bool]:
    """Generate the board's dump and train a bundle on it with the default config; when the gate refuses
    it, serve it anyway (`promote --force`): the figures say how good it is. Returns (data, store, forced)."""
    data, store = out / name / "data", out / name / "store"
    generate(data, postings, seed, board=name)
    trained = _widen(
        "train", "--corpus", str(data / "postings.jsonl"), "--store", str(store), "--pairs", str(data / "pairs.tsv")
    )
    if trained.returncode not in (0, 3):
        raise SystemExit(f"widen train failed on {name}: {trained.stderr}")
    version = json.loads(_widen("bundles", "--store", str(store), "--json").stdout)[-1]["version"]
    forced = trained.returncode == 3
    if forced:
        _widen("promote", version, "--store", str(store), "--force")
    return data, store, forced


def board(name: str, out: Path, postings: int, seed: int) -> dict[str, Any]:
    data, store, forced = prepare(name, out, postings, seed)
    version = Store(store).current_version()
    assert version is not None
    gate = Store(store).manifest(version).gate
    common = ["--store", str(store), "--queries", str(data / "queries.jsonl"), "--truth", str(data / "truth.json")]
    for args in (
        ["--postings", str(data / "open_postings.jsonl"), "--out", str(out / name / "eval")],
        ["--postings", str(data / "postings.jsonl"), "--days", WINDOWS, "--out", str(out / name / "windows")],
    ):
        done = _widen("evaluate", *common, *args)
        if done.returncode != 0:
            raise SystemExit(f"widen evaluate failed on {name}: {done.stderr}")
    lexicon = Lexicon(Store(store).open_bundle())
    truth = json.loads((data / "truth.json").read_text(encoding="utf-8"))
    card = scorecard(lexicon, truth, lexicon.options)
    return {
        "board": BOARD_NAMES[name],
        "bundle": version,
        "gate": {"score": gate.score if gate else None, "passed": bool(gate and gate.passed), "forced": forced},
        "report": json.loads((out / name / "eval" / "report.json").read_text(encoding="utf-8")),
        "windows": json.loads((out / name / "windows" / "windows.json").read_text(encoding="utf-8")),
        "scorecard": {k: round(v, 3) if isinstance(v, float) else v for k, v in card.items() if k != "families"},
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "eval")
    parser.add_argument("--postings", type=int, default=20000)
    parser.add_argument("--seed", type=int, default=7)
    args = parser.parse_args()
    results: dict[str, Any] = {"machine": machine(), "date": time.strftime("%Y-%m-%d"), "boards": {}}
    for name in ("tollbridge", "oxmere", "fellhaven"):
        print(f"{name} ...", file=sys.stderr, flush=True)
        results["boards"][name] = board(name, args.out.resolve(), args.postings, args.seed)
    (args.out / "boards.json").write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    for name, r in results["boards"].items():
        print(f"\n## {r['board']} (bundle {r['bundle']}, gate {r['gate']})")
        print((args.out / name / "eval" / "report.md").read_text(encoding="utf-8").split("## Per family")[0])
        print("scorecard:", r["scorecard"])
        print("windows:", json.dumps(r["windows"]))


if __name__ == "__main__":
    main()
