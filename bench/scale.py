"""`make scale` (`python -m bench.scale`): widen at a national board's size, one size after another.

For each size (default 20,000, 200,000 and 1,000,000 postings of the real-vocabulary board, Fellhaven
Jobs, `demo_postings/fellhaven.py`; generated once into OUT/N/data and kept):

- **training**: `widen train` (default config, the board's gate pairs) in a process of its own: wall
  time, each stage's time, peak RSS of the main process and of its largest worker; the bundle's size
  and entries; the concepts' k-means time;
- **gensim alone** on the same tokenised text (phrase passes streamed from a file, skip-gram in
  corpus-file mode): wall time and peak RSS, and widen's time over it (the target: at most 1.2);
  and widen's time over **gensim's parts**, the same gensim calls on what widen hands them (the
  phrase passes above, plus widen's own skip-gram stage, which is Word2Vec on widen's corpus);
- **serving**: `widen serve` from start to ready, RSS and PSS with 1 and 2 workers, with the busiest
  `WIDEN_PREPARE_ENTRIES` entries prepared (the service's default) and with every entry prepared;
  and PSS as the day's log goes through 1 and 2 workers (after 200, 2,000, 20,000 queries);
- **a hot swap under load**: wrk replays the day's query log while the next bundle is published:
  failed requests, p99, seconds until the new bundle answers;
- **expand** in-process, head and tail title queries: the first call and a repeat, medians;
- **tagging**: `widen tag` postings a second on the first 50,000 postings.

Results go to OUT/scale.json (merged with what an earlier run measured for other sizes) and a log-log
plot of time and memory against postings to OUT/scale.png (copied into docs/ by hand with the table).

    python -m bench.scale --out build/scale [--sizes 20000,200000,1000000] [--skip gensim,serving,swap]
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path
from typing import Any

from bench.common import machine
from bench.scale_parts import (
    bundle_size,
    expand_by_band,
    gensim_alone,
    serving,
    swap_under_load,
    tagging,
    through_the_day,
    train_once,
)
from demo_postings.generate import generate
from service.settings import Settings
from widen.evaluation.runs import read_queries

__all__ = ["main", "measure"]

#: Every entry prepared, for the side-by-side with the service's default (`WIDEN_PREPARE_ENTRIES`).
ALL = 10**9
DEFAULT_PREPARED = Settings.model_fields["prepare_entries"].default


def _data(out: Path, postings: int) -> Path:
    data = out / str(postings) / "data"
    if not (data / "postings.jsonl").is_file():
        started = time.perf_counter()
        generate(data, postings, seed=5, board="fellhaven")
        print(f"  generated in {time.perf_counter() - started:.0f} s", file=sys.stderr, flush=True)
    return data


def measure(out: Path, postings: int, skip: set[str], earlier: dict[str, Any] | None = None) -> dict[str, Any]:
    """Every figure of one size (see the module). With `train` in `skip`, the training figures (and
    gensim's) of the `earlier` run are kept and the rest measured again on its store."""
    data, work = _data(out, postings), out / str(postings)
    store = work / "store"
    if "train" in skip and earlier is not None:
        row: dict[str, Any] = dict(earlier)
        skip = skip | {"gensim"}
    else:
        trained = train_once(data / "postings.jsonl", store, {"gate.pairs": str(data / "pairs.tsv")})
        row = {"postings": postings, "train": trained, "bundle": bundle_size(store, trained["version"])}
        row["concepts_kmeans_s"] = trained["concepts"].get("seconds")
        print(f"  trained in {trained['wall_s']} s", file=sys.stderr, flush=True)
    trained = row["train"]
    if "gensim" not in skip:
        row["gensim_alone"] = gensim_alone(data / "postings.jsonl", work)
        row["train_over_gensim"] = round(trained["wall_s"] / row["gensim_alone"]["wall_s"], 3)
        # The same gensim calls on what widen feeds them: its phrase passes on the tokenised text (as
        # above) and its Word2Vec on widen's own phrased corpus (widen's skip-gram stage is that call
        # alone). gensim alone trains on a smaller corpus: unfiltered phrases join more words.
        parts = row["gensim_alone"]["phrases_s"] + trained["stages"]["skip-gram"]
        row["gensim_parts_s"] = round(parts, 1)
        row["train_over_gensim_parts"] = round(trained["wall_s"] / parts, 3)
    typed = [q.query for q in read_queries(data / "queries.jsonl")][:200]
    if "serving" not in skip:
        row["serving"] = serving(store, DEFAULT_PREPARED, typed)
        row["serving_all_prepared"] = serving(store, ALL, typed)
        row["serving_day"] = through_the_day(store, data / "query_log.jsonl", DEFAULT_PREPARED)
    row["expand"] = expand_by_band(store, data / "queries.jsonl", DEFAULT_PREPARED)
    row["tagging"] = tagging(store, data / "postings.jsonl", work)
    if "swap" not in skip:  # last: it publishes a copy of the bundle as the next night's
        row["swap"] = swap_under_load(store, data / "query_log.jsonl", work)
    return row


def plot(results: dict[str, Any], target: Path) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    rows = sorted(results["sizes"].values(), key=lambda r: r["postings"])
    n = [r["postings"] for r in rows]
    fig, (left, right) = plt.subplots(1, 2, figsize=(10, 4))
    left.loglog(n, [r["train"]["wall_s"] for r in rows], "o-", label="widen train")
    if all("gensim_alone" in r for r in rows):
        left.loglog(n, [r["gensim_alone"]["wall_s"] for r in rows], "s--", label="gensim alone")
    left.set(xlabel="postings", ylabel="seconds", title="Training time")
    right.loglog(n, [r["train"]["main_kib"] / 1024 for r in rows], "o-", label="widen train, peak RSS")
    if all("serving" in r for r in rows):
        right.loglog(n, [r["serving"]["1_worker"]["rss_mib"] for r in rows], "^-", label="widen serve, 1 worker")
    right.set(xlabel="postings", ylabel="MiB", title="Memory")
    for axes in (left, right):
        axes.legend()
        axes.grid(True, which="both", alpha=0.3)
    fig.tight_layout()
    fig.savefig(target, dpi=100)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--out", type=Path, default=Path("build/scale"))
    parser.add_argument("--sizes", default="20000,200000,1000000")
    parser.add_argument("--skip", default="", help="leave out: gensim, serving, swap; train (keep the last run's)")
    args = parser.parse_args()
    out = args.out.resolve()
    out.mkdir(parents=True, exist_ok=True)
    saved = out / "scale.json"
    results: dict[str, Any] = json.loads(saved.read_text(encoding="utf-8")) if saved.is_file() else {"sizes": {}}
    results.update(machine=machine(), date=time.strftime("%Y-%m-%d"))
    for size in (int(s) for s in args.sizes.split(",")):
        print(f"{size} postings ...", file=sys.stderr, flush=True)
        skip = set(filter(None, args.skip.split(",")))
        results["sizes"][str(size)] = measure(out, size, skip, results["sizes"].get(str(size)))
        saved.write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
        plot(results, out / "scale.png")
    print(json.dumps(results, indent=2))


if __name__ == "__main__":
    main()
