"""`python -m bench.concepts`: concepts at work, on each board and at a national board's size.

- **Stability across nights**: a board's dump of days 0-58 and of days 1-59 trained into one store,
  one after the other as the nightly job does; the postings both nights hold tagged by each bundle;
  the share that keep every token (the issue's target: at least 0.9), and by size.
- **Search across nights** (boards whose queries have parts: Fellhaven Jobs, its report part): widen
  with concept clauses from night two's bundle, on an index tagged by night one's bundle against
  one tagged by night two's, by band.
- **Tagging speed**: `widen tag` over the whole dump (postings a second, whole process), and
  `/v1/concept-tokens` on a real `widen serve` in batches of 1,000 (postings a second), side by side
  in one run.
- **k-means at scale**: spherical k-means at each default size on a sample of `--sample` posting-like
  vectors out of `--postings` (clustered, 100 dimensions), and tagging all of them, against one
  matrix product of all of them with the finest centroids (the least any tagging can cost).

    python -m bench.concepts --out build/concepts [--boards tollbridge,oxmere,fellhaven] [--postings 1000000]
"""

from __future__ import annotations

import argparse
import io
import json
import statistics
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import httpx
import numpy as np

from bench.common import machine
from demo_postings.generate import generate
from tests.helpers import open_store
from tests.live_server import live_server
from training.concepts import assign, spherical_kmeans
from training.config import load_config
from training.pipeline import train
from widen.decisions.decision import DecisionSet
from widen.evaluation.index import SearchIndex
from widen.evaluation.runs import evaluate, read_queries
from widen.model.concepts import unit_rows
from widen.model.store import Store

__all__ = ["main"]


def _nights(dump: Path, out: Path) -> tuple[Path, Path]:
    rows = [json.loads(line) for line in dump.read_text(encoding="utf-8").splitlines()]
    days = sorted({r["posted_at"][:10] for r in rows})
    paths = []
    for name, kept in (("one", set(days[:-1])), ("two", set(days[1:]))):
        path = out / f"night-{name}.jsonl"
        path.write_text("".join(json.dumps(r) + "\n" for r in rows if r["posted_at"][:10] in kept), encoding="utf-8")
        paths.append(path)
    return paths[0], paths[1]


def _two_nights(board: str, out: Path, postings: int, seed: int, reuse: bool) -> tuple[Path, list[str], Path]:
    """The board's store with night one's bundle and night two's after it (trained, or the last run's)."""
    data = out / board / "data"
    if not (data / "postings.jsonl").is_file():
        generate(data, postings, seed=seed, board=board)
    store = out / board / "store"
    two = out / board / "night-two.jsonl"
    versions = Store(store).versions() if reuse and store.is_dir() else []
    if len(versions) >= 2 and two.is_file():
        return store, versions[-2:], two
    one, two = _nights(data / "postings.jsonl", out / board)
    first = train(one, store, load_config(None), force=True, out=io.StringIO())
    second = train(two, store, load_config(None), force=True, out=io.StringIO())
    return store, [first.version, second.version], two


def across_nights(data: Path, store: Path, versions: list[str], part: str = "report") -> dict[str, Any]:
    """Search with concept clauses when the index was tagged by last night's bundle and the query comes
    from tonight's, against an index tagged tonight: what the "keep every token" share costs in search."""
    queries = [q for q in read_queries(data / "queries.jsonl") if q.extra.get("part", part) == part]
    tonight = open_store(store, versions[1]).lexicon
    options = tonight.options  # widen_concepts turns the clauses on; widen is without them
    row: dict[str, Any] = {"queries": len(queries), "part": part}
    for name, tagger in (("tagged_tonight", tonight), ("tagged_last_night", open_store(store, versions[0]).lexicon)):
        index = SearchIndex(data / "open_postings.jsonl", store / "search-index", tagger=tagger)
        report = evaluate(tonight, DecisionSet(), index, queries, options, methods=("widen", "widen_concepts"))
        for band, block in [("all", report), *report["bands"].items()]:
            for method, m in block["methods"].items():
                figures = [round(m["recall@100"], 3), round(m["ndcg@10"], 3)]
                row.setdefault(band, {}).setdefault(method, {})[name] = figures
    return row


def stability(board: str, out: Path, postings: int, seed: int, reuse: bool = False) -> dict[str, Any]:
    store, versions, two = _two_nights(board, out, postings, seed, reuse)
    second = Store(store).manifest(versions[1])
    shared = [json.loads(line) for line in two.read_text(encoding="utf-8").splitlines()]
    pairs = [(r["title"], r["description"]) for r in shared]
    a = open_store(store, versions[0]).lexicon.tag(pairs)
    b = open_store(store, versions[1]).lexicon.tag(pairs)
    both = [(x, y) for x, y in zip(a, b, strict=True) if x and y]
    first_lineage = Store(store).manifest(versions[0]).concepts.get("lineage")
    result = {
        "postings": len(pairs),
        "kept_every_token": round(float(np.mean([x == y for x, y in both])), 4),
        "kept_by_size": [round(float(np.mean([x[i] == y[i] for x, y in both])), 4) for i in range(len(both[0][0]))],
        "estimate_at_training": second.concepts.get("kept_share"),
        "same_lineage": second.concepts.get("lineage") == first_lineage,
        "store": str(store),
        "dump": str(two),
    }
    data = out / board / "data"
    if json.loads((data / "queries.jsonl").read_text(encoding="utf-8").splitlines()[0]).get("part"):
        result["search_across_nights"] = across_nights(data, store, versions)
    return result


def tagging_speed(store: Path, dump: Path, rounds: int = 3) -> dict[str, Any]:
    rows = [json.loads(line) for line in dump.read_text(encoding="utf-8").splitlines()]
    body = [{"id": r["id"], "title": r["title"], "description": r["description"]} for r in rows]
    command, endpoint = [], []
    with live_server(store) as server, httpx.Client(base_url=server.base, timeout=120) as client:
        for _ in range(rounds + 1):  # the first round warms both up and is not counted
            started = time.perf_counter()
            subprocess.run(
                [sys.executable, "-m", "widen.cli", "tag", "--corpus", str(dump), "--store", str(store)],
                check=True,
                stdout=subprocess.DEVNULL,
                stderr=subprocess.DEVNULL,
            )
            command.append(len(rows) / (time.perf_counter() - started))
            started = time.perf_counter()
            for n in range(0, len(body), 1000):
                client.post("/v1/concept-tokens", json={"postings": body[n : n + 1000]}).raise_for_status()
            endpoint.append(len(rows) / (time.perf_counter() - started))
    return {
        "postings": len(rows),
        "command_per_s": round(statistics.median(command[1:])),
        "endpoint_per_s": round(statistics.median(endpoint[1:])),
        "endpoint_over_command": round(statistics.median(endpoint[1:]) / statistics.median(command[1:]), 3),
    }


def kmeans_at_scale(postings: int, sample: int, sizes: list[int], seed: int = 1) -> dict[str, Any]:
    rng = np.random.default_rng(seed)
    centres = unit_rows(rng.normal(size=(4096, 100)))
    x = unit_rows(centres[rng.integers(0, 4096, postings)] + rng.normal(scale=0.08, size=(postings, 100)))
    drawn = x[rng.choice(postings, sample, replace=False)]
    fits, finest = {}, None
    for k in sizes:
        started = time.perf_counter()
        finest, _ = spherical_kmeans(drawn, k, rng, iterations=20)
        fits[str(k)] = round(time.perf_counter() - started, 2)
    assert finest is not None
    started = time.perf_counter()
    assign(x, finest)
    tag_all = time.perf_counter() - started
    started = time.perf_counter()
    for n in range(0, postings, 65536):
        _ = x[n : n + 65536] @ finest.T
    product = time.perf_counter() - started
    return {
        "postings": postings,
        "sample": sample,
        "fit_s": fits,
        "fit_total_s": round(sum(fits.values()), 2),
        "tag_all_finest_s": round(tag_all, 2),
        "product_s": round(product, 2),
        "tag_over_product": round(tag_all / product, 3),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--out", type=Path, default=Path("build/concepts"))
    parser.add_argument("--boards", default="tollbridge,oxmere,fellhaven")
    parser.add_argument("--board-postings", type=int, default=20_000)
    parser.add_argument("--postings", type=int, default=1_000_000, help="posting vectors for k-means at scale")
    parser.add_argument("--sample", type=int, default=100_000)
    parser.add_argument("--reuse", action="store_true", help="use the two bundles of the last run's stores")
    parser.add_argument("--only-stability", action="store_true", help="leave the speed figures as they were")
    args = parser.parse_args()
    args.out.mkdir(parents=True, exist_ok=True)
    saved = args.out / "concepts.json"
    results: dict[str, Any] = json.loads(saved.read_text(encoding="utf-8")) if saved.is_file() else {}
    results.update({"machine": machine(), "date": time.strftime("%Y-%m-%d")})
    results.setdefault("stability", {})
    for board in args.boards.split(","):
        print(f"{board}: two nights ...", file=sys.stderr, flush=True)
        results["stability"][board] = stability(board, args.out.resolve(), args.board_postings, 7, args.reuse)
        print(json.dumps(results["stability"][board]), file=sys.stderr, flush=True)
    if not args.only_stability:
        first = next(iter(results["stability"].values()))
        print("tagging speed ...", file=sys.stderr, flush=True)
        results["tagging"] = tagging_speed(Path(first["store"]), Path(first["dump"]))
        print("k-means at scale ...", file=sys.stderr, flush=True)
        results["kmeans"] = kmeans_at_scale(args.postings, args.sample, list(load_config(None).concepts.sizes))
    saved.write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(results, indent=2))


if __name__ == "__main__":
    main()
