"""The measurements of `bench.scale`, one board size at a time (see that module for what each means)."""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import statistics
import subprocess
import sys
import threading
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from typing import Any

import httpx
import psutil

from bench.common import ROOT
from bench.drill import _publish
from bench.server import _pss_kib
from bench.traffic import log_paths, replay_loop
from tests.helpers import open_store
from tests.live_server import live_server
from training.config import load_config
from training.corpus import PostingCorpus
from widen.decisions.decision import DecisionSet
from widen.evaluation.runs import read_queries
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import expand, prepare
from widen.model.store import Store
from widen.text.tokenize import sentences

__all__ = [
    "train_once",
    "gensim_alone",
    "bundle_size",
    "serving",
    "through_the_day",
    "swap_under_load",
    "expand_by_band",
    "tagging",
]

_TRAIN = r"""
import io, json, resource, sys
from pathlib import Path
from training.config import load_config
from training.pipeline import train
done = train(Path(sys.argv[1]), Path(sys.argv[2]), load_config(None, json.loads(sys.argv[3])), force=True,
             out=io.StringIO())
own = next(int(l.split()[1]) for l in open("/proc/self/status") if l.startswith("VmHWM:"))
kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
print(json.dumps({"version": done.version, "stages": done.seconds, "main_kib": own, "worker_kib": kids,
                  "concepts": done.manifest.concepts, "entries": done.manifest.vocabulary_size}))
"""

# gensim alone, as a team would run it on a large dump: the same phrase passes streamed from the file
# (each pass written out), then Word2Vec in corpus-file mode, as widen's own skip-gram runs. It prints
# the phrase passes' time, the skip-gram's, and the words the skip-gram saw.
_GENSIM = r"""
import json, sys, time
from gensim.models import Word2Vec
from gensim.models.phrases import Phrases
from gensim.models.word2vec import LineSentence
cfg = json.loads(sys.argv[2])
source = sys.argv[1]
started = time.perf_counter()
p = cfg["phrases"]
scoring = "npmi" if p["scoring"] == "npmi" else "default"
for n in range(p["max_words"] - 1):
    frozen = Phrases(LineSentence(source), min_count=p["min_count"], threshold=p["threshold"], scoring=scoring,
                     connector_words=frozenset(p["bridge_words"]), delimiter="_").freeze()
    target = f"{sys.argv[1]}.pass{n + 1}"
    with open(target, "w", encoding="utf-8") as out:
        for s in LineSentence(source):
            out.write(" ".join(frozen[s]) + "\n")
    source = target
phrased = time.perf_counter()
e = cfg["embedding"]
model = Word2Vec(corpus_file=source, sg=1, hs=0, negative=e["negative"], vector_size=e["vector_size"],
                 window=e["window"], min_count=e["min_count"], sample=e["sample"], alpha=e["alpha"],
                 epochs=e["epochs"], seed=e["seed"], workers=e["workers"])
done = time.perf_counter()
print(json.dumps({"inner_s": done - started, "phrases_s": phrased - started, "skipgram_s": done - phrased,
                  "skipgram_words": model.corpus_total_words}))
"""


def train_once(
    dump: Path, store: Path, overrides: dict[str, Any], source: Path = ROOT, hash_seed: str | None = None
) -> dict[str, Any]:
    """`widen train` in a process of its own, with the code at `source` (this checkout by default) and,
    when given, a fixed Python hash seed: wall time, each stage's time, peak RSS of it and its workers."""
    started = time.perf_counter()
    env = {**os.environ, "PYTHONPATH": str(source)}
    if hash_seed is not None:
        env["PYTHONHASHSEED"] = hash_seed
    out = subprocess.run(
        [sys.executable, "-c", _TRAIN, str(dump), str(store), json.dumps(overrides)],
        capture_output=True,
        text=True,
        cwd=source,
        env=env,
    )
    if out.returncode != 0:
        raise SystemExit(f"training at {source} failed: {out.stderr[-2000:]}")
    got: dict[str, Any] = json.loads(out.stdout.strip().splitlines()[-1])
    got["wall_s"] = round(time.perf_counter() - started, 1)
    return got


def _tokenised(dump: Path, out: Path) -> Path:
    """The dump as widen reads it (de-duplicated, tokenised), one sentence a line: gensim's input."""
    if out.is_file():
        return out
    seen: set[bytes] = set()
    partial = out.with_suffix(".partial")
    with partial.open("w", encoding="utf-8") as fh:
        for posting in PostingCorpus(dump, load_config(None).corpus):
            per_text = [sentences(t) for t in posting.texts]
            key = hashlib.blake2b("\x1f".join(t for x in per_text for s in x for t in s).encode(), digest_size=12)
            if key.digest() in seen:
                continue
            seen.add(key.digest())
            fh.writelines(" ".join(sent) + "\n" for text in per_text for sent in text)
    partial.replace(out)
    return out


def gensim_alone(dump: Path, work: Path) -> dict[str, Any]:
    """gensim's phrase passes and skip-gram on the tokenised dump: process wall time and peak RSS."""
    text = _tokenised(dump, work / "tokenised.txt")
    started = time.perf_counter()
    process = subprocess.Popen(
        [sys.executable, "-c", _GENSIM, str(text), load_config(None).model_dump_json()],
        stdout=subprocess.PIPE,
        text=True,
    )
    peak = _peak_rss(process)
    inner = json.loads((process.communicate()[0] or "{}").strip().splitlines()[-1])
    rounded = {k: round(v, 1) if isinstance(v, float) else v for k, v in inner.items()}
    return {"wall_s": round(time.perf_counter() - started, 1), **rounded, "peak_mib": peak}


def _peak_rss(process: subprocess.Popen[str]) -> float:
    """The largest RSS of a process (with its children) seen while it runs, polled every 0.2 s, MiB."""
    peak = 0
    watched = psutil.Process(process.pid)
    while process.poll() is None:
        with contextlib.suppress(psutil.Error):
            peak = max(peak, sum(p.memory_info().rss for p in [watched, *watched.children(recursive=True)]))
        time.sleep(0.2)
    return round(peak / 2**20, 1)


def bundle_size(store: Path, version: str) -> dict[str, Any]:
    folder = Store(store).bundle_dir(version)
    size = sum(f.stat().st_size for f in folder.rglob("*") if f.is_file())
    return {"mib": round(size / 2**20, 1), "entries": Store(store).manifest(version).vocabulary_size}


def _rss_mib(pid: int) -> float:
    proc = psutil.Process(pid)
    return round(float(sum(p.memory_info().rss for p in [proc, *proc.children(recursive=True)])) / 2**20, 1)


def _checkout_env(env: dict[str, str], source: Path | None) -> dict[str, str]:
    return env if source is None else {**env, "PYTHONPATH": str(source)}  # served from `source`'s checkout


def serving(store: Path, prepare_entries: int, queries: list[str], source: Path | None = None) -> dict[str, Any]:
    """From `widen serve` to ready, and RSS and PSS once it answered `queries`, for 1 and 2 workers;
    served by the checkout at `source` (None: this one)."""
    got: dict[str, Any] = {"prepare_entries": prepare_entries}
    env = _checkout_env({"WIDEN_PREPARE_ENTRIES": str(prepare_entries)}, source)
    for workers in (1, 2):
        started = time.monotonic()
        with live_server(store, env, args=("--workers", str(workers)), ready_within=600, cwd=source) as server:
            ready = time.monotonic() - started
            with httpx.Client(base_url=server.base, timeout=30) as client:
                for q in queries:
                    client.get("/v1/expand", params={"q": q}).raise_for_status()
            got[f"{workers}_worker"] = {
                "ready_s": round(ready, 1),
                "rss_mib": _rss_mib(server.process.pid),
                "pss_mib": round(_pss_kib(server.process.pid) / 1024, 1),
            }
    got["pss_2_over_1"] = round(got["2_worker"]["pss_mib"] / got["1_worker"]["pss_mib"], 3)
    return got


def _pss_as_the_day_goes(base: str, pid: int, day: list[str], marks: tuple[int, ...]) -> dict[str, float]:
    clients = [httpx.Client(base_url=base, timeout=30) for _ in range(4)]

    def ask(n: int) -> httpx.Response:
        return clients[n % 4].get("/v1/expand", params={"q": day[n]})

    done, seen = 0, {}
    try:
        for mark in marks:
            with ThreadPoolExecutor(4) as pool:
                for answer in pool.map(ask, range(done, min(mark, len(day)))):
                    answer.raise_for_status()
            done = mark
            seen[str(mark)] = round(_pss_kib(pid) / 1024, 1)
    finally:
        for client in clients:
            client.close()
    return seen


def through_the_day(
    store: Path,
    log: Path,
    prepare_entries: int,
    marks: tuple[int, ...] = (200, 2_000, 20_000),
    source: Path | None = None,
) -> dict[str, Any]:
    """PSS of 1 and of 2 workers as the day's log goes through them, in order, over 4 connections: each
    worker keeps its own answers and its own tail entries, so the two grow apart from one served process."""
    day = [json.loads(line)["q"] for line in log.read_text(encoding="utf-8").splitlines() if line.strip()]
    got: dict[str, Any] = {"prepare_entries": prepare_entries, "connections": 4}
    for workers in (1, 2):
        env = _checkout_env({"WIDEN_PREPARE_ENTRIES": str(prepare_entries)}, source)
        with live_server(store, env, args=("--workers", str(workers)), ready_within=600, cwd=source) as server:
            seen = _pss_as_the_day_goes(server.base, server.process.pid, day, marks)
        got[f"{workers}_worker_pss_mib"] = seen
    got["pss_2_over_1"] = {
        m: round(got["2_worker_pss_mib"][m] / got["1_worker_pss_mib"][m], 3) for m in got["1_worker_pss_mib"]
    }
    return got


def swap_under_load(store: Path, log: Path, work: Path, seconds: int = 120) -> dict[str, Any]:
    """wrk replays the day's query log (32 connections, round and round) while the next bundle is published:
    failed requests, p99, and how long the new bundle took to serve; and, first, the same load as long with
    no swap (`steady`), the latencies the swap's are to be read against."""
    paths, _, _ = log_paths(log, work / "replay-paths.txt")
    result: dict[str, Any] = {"seconds": seconds}
    with live_server(store, ready_within=600) as server:
        result["steady"] = replay_loop(server.base, seconds, paths, 32)
        load = threading.Thread(target=lambda: result.update(replay_loop(server.base, seconds, paths, 32)))
        load.start()
        time.sleep(seconds * 0.2)  # steady load first (a pause in the bench, never in a test)
        published, started = _publish(store), time.monotonic()
        deadline = started + seconds * 0.75
        while time.monotonic() < deadline:
            if httpx.get(f"{server.base}/v1/model", timeout=5).json()["version"] == published:
                result["swap_s"] = round(time.monotonic() - started, 1)
                break
            time.sleep(0.2)
        load.join()
    result.setdefault("swap_s", None)
    return result


def expand_by_band(store: Path, queries: Path, prepare_entries: int) -> dict[str, Any]:
    """In-process expand times (ms) of head and tail title queries after the service's preparation: each
    query's first call and a repeat, medians by band."""
    opened = open_store(store)
    cache = ExpansionCache(opened.lexicon)
    prepare(opened.lexicon, cache, opened.options, prepare_entries)
    none, out = DecisionSet(), {}
    for band in ("head", "tail"):
        typed = list(dict.fromkeys(q.query for q in read_queries(queries) if q.extra.get("band") == band))[:300]
        first: list[float] = []
        again: list[float] = []
        for q in typed:
            for times in (first, again):
                started = time.perf_counter()
                expand(opened.lexicon, none, q, opened.options, cache=cache)
                times.append((time.perf_counter() - started) * 1000)
        out[band] = {"queries": len(typed), "first_ms": _median(first), "again_ms": _median(again)}
    return out


def _median(values: list[float]) -> float | None:
    return round(statistics.median(values), 3) if values else None


def tagging(store: Path, dump: Path, work: Path, postings: int = 50_000) -> dict[str, Any]:
    """`widen tag` over the dump's first `postings`: postings a second, whole process."""
    part = work / "tag-slice.jsonl"
    with dump.open(encoding="utf-8") as src, part.open("w", encoding="utf-8") as out:
        n = 0
        for n, line in enumerate(src, 1):
            out.write(line)
            if n >= postings:
                break
    tags, started = work / "tags.jsonl", time.perf_counter()
    subprocess.run(
        [sys.executable, "-m", "widen.cli", "tag", "--corpus", str(part), "--store", str(store), "--out", str(tags)],
        check=True,
        capture_output=True,
        cwd=ROOT,
    )
    return {"postings": n, "per_s": round(n / (time.perf_counter() - started))}
