"""`python -m bench.same_bundle --before COMMIT`: the bundle this checkout trains against the one an
earlier commit trains from the same dump, file by file, byte for byte.

A change meant to make training faster without changing what it learns is shown to change nothing
this way. Both sides train in interpreters of their own with one skip-gram worker and a fixed hash
seed (gensim's skip-gram with several threads, and Python's set order, are not deterministic run to
run); every file of the two bundles but the manifest (which records the version, times and dates)
must be identical, and the manifests must agree on every count. The dump is the 20,000-posting
real-title board of `make scale` (Fellhaven Jobs, generated if missing) unless `--corpus` names one.

    python -m bench.same_bundle --before c9f3464 --out build/same_bundle
"""

from __future__ import annotations

import argparse
import filecmp
import json
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import numpy as np
from gensim.models import KeyedVectors

from bench.common import ROOT, machine
from bench.scale import _data
from bench.scale_parts import train_once

__all__ = ["main", "train_at"]

#: The manifest fields that must agree (the rest name the run: version, dates, times, software).
_COUNTS = ("vocabulary_size", "phrase_count", "corpus", "concepts")


def train_at(source: Path, dump: Path, store: Path, overrides: dict[str, Any]) -> Path:
    """Train `dump` with the code at `source` into `store` (hash seed 0); returns the bundle's folder."""
    return store / "bundles" / str(train_once(dump, store, overrides, source=source, hash_seed="0")["version"])


def _same(before: Path, now: Path, name: str) -> bool:
    """One file of the two bundles alike: byte for byte, but for what names the run (the pickled vectors'
    own log of when they were made; the concepts' lineage, drawn from the version)."""
    if name == "vectors.kv":
        old, new = KeyedVectors.load(str(before / name)), KeyedVectors.load(str(now / name))
        return old.index_to_key == new.index_to_key and np.array_equal(old.vectors, new.vectors)
    if name == "concepts.json":
        old_c, new_c = (json.loads((b / name).read_text()) for b in (before, now))
        return {**old_c, "lineage": None} == {**new_c, "lineage": None}
    return filecmp.cmp(before / name, now / name, shallow=False)


def _compare(before: Path, now: Path) -> dict[str, Any]:
    names = sorted({p.relative_to(before).as_posix() for p in before.rglob("*") if p.is_file()})
    names_now = sorted({p.relative_to(now).as_posix() for p in now.rglob("*") if p.is_file()})
    differ = [n for n in names if n != "manifest.json" and not _same(before, now, n)]
    old, new = (json.loads((b / "manifest.json").read_text()) for b in (before, now))
    counts = [k for k in _COUNTS if _counted(old.get(k)) != _counted(new.get(k))]
    return {"files": len(names), "same_names": names == names_now, "differ": differ, "manifest_differs": counts}


def _counted(value: Any) -> Any:
    """A manifest field without what names the run (the concepts' lineage and the bundle they continue)."""
    if isinstance(value, dict):
        return {k: v for k, v in value.items() if k not in ("lineage", "continues", "seconds")}
    return value


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--before", required=True, help="the commit to compare against")
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "same_bundle")
    parser.add_argument("--corpus", type=Path, help="a dump (default: the 20,000-posting real-title board)")
    args = parser.parse_args()
    args.out.mkdir(parents=True, exist_ok=True)
    # Resolved: each training runs in its own checkout's folder.
    dump = (args.corpus or _data(ROOT / "build" / "scale", 20_000) / "postings.jsonl").resolve()
    commit = subprocess.run(["git", "rev-parse", args.before], cwd=ROOT, capture_output=True, text=True, check=True)
    before_src = args.out / f"src-{commit.stdout.strip()[:10]}"
    if not before_src.is_dir():
        subprocess.run(["git", "worktree", "add", "--detach", str(before_src), args.before], cwd=ROOT, check=True)
    overrides = {"embedding.workers": 1}
    pairs = dump.parent / "pairs.tsv"
    if pairs.is_file():
        overrides["gate.pairs"] = str(pairs)  # type: ignore[assignment]
    timings = {}
    bundles = {}
    for label, source in (("before", before_src), ("now", ROOT)):
        store = args.out / f"store-{label}"
        subprocess.run(["rm", "-rf", str(store)], check=True)
        started = time.perf_counter()
        bundles[label] = train_at(source.resolve(), dump.resolve(), store.resolve(), overrides)
        timings[label] = round(time.perf_counter() - started, 1)
        print(f"{label}: trained in {timings[label]} s", file=sys.stderr, flush=True)
    report = {"machine": machine(), "before": args.before, "corpus": str(dump), "train_s": timings}
    report |= _compare(bundles["before"], bundles["now"])
    (args.out / "same_bundle.json").write_text(json.dumps(report, indent=2) + "\n")
    print(json.dumps(report, indent=2))
    if report["differ"] or report["manifest_differs"] or not report["same_names"]:
        raise SystemExit("the bundles differ")


if __name__ == "__main__":
    main()
