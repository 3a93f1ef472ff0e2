"""`make bench`: speed and memory figures, each a ratio measured side by side in one run.

Absolute times on a shared 2-core machine are noisy; a ratio of two things timed in the
same run, alternating, is not. Results go to OUT/results.json and a Markdown table on stdout,
which is what the README's benchmark section is copied from.

    python bench/run.py --demo build/demo --out build/bench
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from demo_postings.generate import generate  # noqa: E402
from training.bundle import Store, open_bundle  # noqa: E402
from training.config import TrainConfig, load_config  # noqa: E402
from training.corpus import PostingCorpus  # noqa: E402
from training.neighbours import normalise_rows, top_k_table  # noqa: E402
from training.tokenize import sentences  # noqa: E402


def machine() -> str:
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    mem = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
    return f"{os.cpu_count()} cores ({cpu}), {mem:.0f} GiB, Python {platform.python_version()}, {platform.system()}"


def _widen_train(corpus: Path, store: Path, config: Path) -> float:
    started = time.perf_counter()
    subprocess.run(
        [
            sys.executable,
            "-m",
            "service.cli",
            "train",
            "--corpus",
            str(corpus),
            "--store",
            str(store),
            "--config",
            str(config),
        ],
        check=True,
        cwd=ROOT,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    return time.perf_counter() - started


_BASELINE = r"""
import json, sys, time
from gensim.models import Word2Vec
from gensim.models.phrases import Phrases
cfg = json.loads(sys.argv[2])
sents = [line.split() for line in open(sys.argv[1], encoding="utf-8")]
started = time.perf_counter()
p = cfg["phrases"]
for _ in range(p["max_words"] - 1):
    frozen = Phrases(sents, min_count=p["min_count"], threshold=p["threshold"], scoring=p["scoring"],
                     connector_words=frozenset(p["connector_words"]), delimiter="_").freeze()
    sents = [frozen[s] for s in sents]
e = cfg["embedding"]
Word2Vec(sents, sg=1, hs=0, negative=e["negative"], vector_size=e["vector_size"], window=e["window"],
         min_count=e["min_count"], sample=e["sample"], alpha=e["alpha"], epochs=e["epochs"], seed=e["seed"],
         workers=e["workers"])
print(time.perf_counter() - started)
"""


def bench_pipeline(demo: Path, work: Path, config_path: Path, rounds: int = 3) -> dict[str, Any]:
    """`widen train` against gensim alone on already tokenised sentences, both process wall times.

    The baseline process imports gensim, reads the tokenised sentences into memory (a list, as
    gensim's tutorials do) and runs the same phrase passes and Word2Vec; its training-only time
    is reported too.
    """
    config = load_config(config_path)
    tokenised = work / "tokenised.txt"
    seen: set[bytes] = set()
    with tokenised.open("w", encoding="utf-8") as fh:
        for posting in PostingCorpus(demo / "postings.jsonl", config.corpus):
            per_text = [sentences(t) for t in posting.texts]
            key = hashlib.blake2b(
                "\x1f".join(t for x in per_text for s in x for t in s).encode(), digest_size=12
            ).digest()
            if key in seen:
                continue
            seen.add(key)
            for text in per_text:
                for sent in text:
                    fh.write(" ".join(sent) + "\n")
    ours, theirs, inner = [], [], []
    for round_ in range(rounds):
        ours.append(_widen_train(demo / "postings.jsonl", work / f"store-{round_}", config_path))
        started = time.perf_counter()
        out = subprocess.run(
            [sys.executable, "-c", _BASELINE, str(tokenised), config.model_dump_json()],
            check=True,
            capture_output=True,
            text=True,
        )
        theirs.append(time.perf_counter() - started)
        inner.append(float(out.stdout.strip()))
    ratio = statistics.median(ours) / statistics.median(theirs)
    return {
        "widen_train_s": [round(x, 2) for x in ours],
        "gensim_alone_s": [round(x, 2) for x in theirs],
        "gensim_alone_training_only_s": [round(x, 2) for x in inner],
        "ratio": round(ratio, 3),
        "ratio_to_training_only": round(statistics.median(ours) / statistics.median(inner), 3),
        "target": "<= 1.2",
    }


def _table_against_most_similar(wv: Any, k: int, sample: int | None) -> dict[str, Any]:
    normed = normalise_rows(wv.vectors)
    started = time.perf_counter()
    _, sims = top_k_table(normed, k)
    blocked = time.perf_counter() - started
    started = time.perf_counter()
    normed @ normed.T  # the matrix product alone: the floor for any exact method
    product = time.perf_counter() - started
    keys = wv.index_to_key if sample is None else wv.index_to_key[:sample]
    identical = True
    started = time.perf_counter()
    for i, key in enumerate(keys):
        ref = np.array([s for _, s in wv.most_similar(key, topn=k)], dtype=np.float32)
        identical &= bool(np.allclose(ref, sims[i], atol=1e-5))
    one_by_one = (time.perf_counter() - started) * len(wv) / len(keys)
    return {
        "entries": len(wv),
        "top_k": k,
        "blocked_s": round(blocked, 4),
        "matrix_product_only_s": round(product, 4),
        "most_similar_s": round(one_by_one, 4),
        "most_similar_extrapolated_from": len(keys),
        "speedup": round(one_by_one / blocked, 1),
        "identical_similarities": identical,
    }


def bench_neighbours(store: Path) -> dict[str, Any]:
    """Blocked matrix products against most_similar once per entry: demo vectors and a 20,000-entry set."""
    from gensim.models import KeyedVectors

    demo = _table_against_most_similar(open_bundle(Store(store)).vectors, 50, None)
    rng = np.random.default_rng(0)
    synthetic = KeyedVectors(100)
    synthetic.add_vectors([f"entry{i}" for i in range(20000)], rng.normal(size=(20000, 100)).astype(np.float32))
    large = _table_against_most_similar(synthetic, 50, 2000)
    return {"demo": demo, "synthetic_20000": large, "target": ">= 20"}


def _median_us(fn: Any, runs: int) -> float:
    times = []
    for _ in range(runs):
        started = time.perf_counter()
        fn()
        times.append(time.perf_counter() - started)
    return round(statistics.median(times) * 1e6, 1)


def bench_expansion(store: Path, demo: Path) -> dict[str, Any]:
    """Expansion in-process: a known phrase (cache off), a multi-segment query, a cache hit, composed search."""
    from service.cache import ResultCache
    from service.decisions import DecisionSet
    from service.expansion import ExpansionOptions, Lexicon, expand
    from service.scorecard import scorecard
    from training.neighbours import top_k_for_vector

    lexicon = Lexicon(open_bundle(Store(store)))
    options, none = ExpansionOptions(), DecisionSet()
    for q in ("staff nurse", "night shift staff nurse hensby"):
        expand(lexicon, none, q, options)  # warm the per-entry memo, as a serving worker would be
    cache = ResultCache(1000)
    key = (lexicon.version, none.version, "staff nurse", options)
    cache.put(key, expand(lexicon, none, "staff nurse", options))
    rng = np.random.default_rng(0)
    big = normalise_rows(rng.normal(size=(100_000, 100)))
    queries = normalise_rows(rng.normal(size=(50, 100)))
    counter = iter(range(10**9))
    truth = json.loads((demo / "truth.json").read_text(encoding="utf-8"))
    card = scorecard(lexicon, truth, options)
    return {
        "known_phrase_median_us": _median_us(lambda: expand(lexicon, none, "staff nurse", options), 3000),
        "multi_segment_median_us": _median_us(
            lambda: expand(lexicon, none, "night shift staff nurse hensby", options), 2000
        ),
        "cache_hit_median_us": _median_us(lambda: cache.get(key), 3000),
        "composed_search_100k_median_ms": round(
            _median_us(lambda: top_k_for_vector(big, queries[next(counter) % 50], 50), 200) / 1000, 3
        ),
        "targets": {"known_phrase_median_us": "<= 200", "composed_search_100k_median_ms": "<= 5"},
        "truth": {k: round(v, 3) if isinstance(v, float) else v for k, v in card.items() if k != "families"},
    }


def _free_port() -> int:
    import socket

    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return int(sock.getsockname()[1])


def _serve(store: Path, workers: int, **env: str) -> tuple[subprocess.Popen[bytes], str]:
    import httpx

    port = _free_port()
    environ = dict(os.environ, WIDEN_ACCESS_LOG="false", **env)
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "service.cli",
            "serve",
            "--store",
            str(store),
            "--port",
            str(port),
            "--workers",
            str(workers),
        ],
        cwd=ROOT,
        env=environ,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    base = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        try:
            if httpx.get(f"{base}/readyz", timeout=1).status_code == 200:
                return proc, base
        except httpx.TransportError:
            pass
        time.sleep(0.2)
    proc.kill()
    raise RuntimeError("the server did not become ready")


def _wrk(url: str, seconds: int = 10, connections: int = 32) -> dict[str, Any]:
    import re as _re

    out = subprocess.run(
        ["wrk", "-t2", f"-c{connections}", f"-d{seconds}s", "--latency", url],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    rps = float(_re.search(r"Requests/sec:\s+([\d.]+)", out).group(1))  # type: ignore[union-attr]

    def ms(label: str) -> float:
        found = _re.search(rf"{label}%\s+([\d.]+)(us|ms|s)", out)
        value, unit = float(found.group(1)), found.group(2)  # type: ignore[union-attr]
        return round(value / 1000 if unit == "us" else value * 1000 if unit == "s" else value, 2)

    errors = sum(int(n) for n in _re.findall(r"Non-2xx or 3xx responses: (\d+)", out))
    errors += sum(int(n) for n in _re.findall(r"(?:connect|read|write|timeout) (\d+)", out))
    return {"rps": round(rps, 1), "p50_ms": ms("50"), "p99_ms": ms("99"), "errors": errors}


def _pss_kib(pid: int) -> int:
    """Proportional set size of a process and its children: shared pages split among sharers."""
    import psutil

    total = 0
    for proc in [psutil.Process(pid), *psutil.Process(pid).children(recursive=True)]:
        for line in Path(f"/proc/{proc.pid}/smaps_rollup").read_text().splitlines():
            if line.startswith("Pss:"):
                total += int(line.split()[1])
    return total


def bench_server(store: Path) -> dict[str, Any]:
    """The real server on 127.0.0.1 under wrk (32 connections): /healthz against /v1/expand, and memory."""
    import shutil as _shutil

    import httpx

    if _shutil.which("wrk") is None:
        raise SystemExit("wrk is needed for the server benchmark: apt-get install wrk")
    query = "/v1/expand?q=night+shift+staff+nurse+hensby"
    results: dict[str, Any] = {}
    for label, env in (("cache on", {}), ("cache off", {"WIDEN_CACHE_SIZE": "0"})):
        proc, base = _serve(store, 1, **env)
        try:
            _wrk(f"{base}/healthz", 3)  # warm up
            rounds = [(_wrk(f"{base}/healthz", 6), _wrk(f"{base}{query}", 6)) for _ in range(3)]  # interleaved
        finally:
            proc.terminate()
            proc.wait(20)
        health = sorted((h for h, _ in rounds), key=lambda r: r["rps"])[1]
        expand = sorted((e for _, e in rounds), key=lambda r: r["rps"])[1]
        results[label] = {
            "healthz": health,
            "expand": expand,
            "ratio": round(expand["rps"] / health["rps"], 3),
            "rounds": [[h["rps"], e["rps"]] for h, e in rounds],
            "worst_p99_ms": max(e["p99_ms"] for _, e in rounds),
            "errors": sum(h["errors"] + e["errors"] for h, e in rounds),
        }
    memory = {}
    for workers in (1, 2):
        proc, base = _serve(store, workers)
        try:
            for _ in range(200):
                httpx.get(f"{base}{query}")
            memory[workers] = _pss_kib(proc.pid)
        finally:
            proc.terminate()
            proc.wait(20)
    results["memory_pss_mib"] = {str(k): round(v / 1024, 1) for k, v in memory.items()}
    results["memory_ratio_2_to_1"] = round(memory[2] / memory[1], 3)
    results["targets"] = {"ratio": ">= 0.7", "p99_ms": "<= 25", "errors": 0, "memory_ratio_2_to_1": "<= 1.3"}
    return results


_PEAK = r"""
import io, json, resource, sys
from pathlib import Path
from training.config import load_config
from training.pipeline import train
train(Path(sys.argv[1]), Path(sys.argv[2]), load_config(Path(sys.argv[3])), out=io.StringIO())
# VmHWM is this process's own peak; ru_maxrss would carry over the parent's peak across exec.
own = next(int(l.split()[1]) for l in open("/proc/self/status") if l.startswith("VmHWM:"))
kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
print(json.dumps({"main_kib": own, "largest_worker_kib": kids}))
"""


def bench_memory(demo: Path, work: Path, config_path: Path) -> dict[str, Any]:
    """Peak RSS training on 4x the postings over 1x (generated with the same seed)."""
    base = sum(1 for _ in (demo / "postings.jsonl").open(encoding="utf-8"))
    results = {}
    for factor in (1, 4):
        folder = work / f"x{factor}"
        generate(folder, base * factor, seed=7)
        out = subprocess.run(
            [
                sys.executable,
                "-c",
                _PEAK,
                str(folder / "postings.jsonl"),
                str(work / f"mem-store-{factor}"),
                str(config_path),
            ],
            check=True,
            capture_output=True,
            text=True,
            cwd=ROOT,
        )
        results[factor] = json.loads(out.stdout.strip().splitlines()[-1])
    return {
        "postings_1x": base,
        "peak_main_mib_1x": round(results[1]["main_kib"] / 1024, 1),
        "peak_main_mib_4x": round(results[4]["main_kib"] / 1024, 1),
        "peak_worker_mib_1x": round(results[1]["largest_worker_kib"] / 1024, 1),
        "peak_worker_mib_4x": round(results[4]["largest_worker_kib"] / 1024, 1),
        "ratio": round(results[4]["main_kib"] / results[1]["main_kib"], 3),
        "target": "<= 1.25",
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--demo", type=Path, default=ROOT / "build" / "demo")
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "bench")
    parser.add_argument("--only", nargs="*", default=None, help="sections: pipeline neighbours memory expansion server")
    args = parser.parse_args()
    args.demo, args.out = args.demo.resolve(), args.out.resolve()
    args.out.mkdir(parents=True, exist_ok=True)
    config_path = args.out / "bench.toml"
    config = TrainConfig()
    config.gate.pairs = str(args.demo / "pairs.tsv")
    config_path.write_text(config.to_toml(), encoding="utf-8")
    results: dict[str, Any] = {"machine": machine(), "date": time.strftime("%Y-%m-%d")}
    wanted = set(args.only or ["pipeline", "neighbours", "memory", "expansion", "server"])
    with tempfile.TemporaryDirectory(prefix="widen-bench-") as tmp:
        work = Path(tmp)
        if "pipeline" in wanted:
            print("pipeline overhead ...", file=sys.stderr)
            results["pipeline"] = bench_pipeline(args.demo, work, config_path)
        if "neighbours" in wanted:
            print("neighbour table ...", file=sys.stderr)
            store = work / "nbr-store"
            _widen_train(args.demo / "postings.jsonl", store, config_path)
            results["neighbours"] = bench_neighbours(store)
        if "expansion" in wanted:
            print("expansion ...", file=sys.stderr)
            store = work / "exp-store"
            _widen_train(args.demo / "postings.jsonl", store, config_path)
            results["expansion"] = bench_expansion(store, args.demo)
        if "server" in wanted:
            print("server under wrk ...", file=sys.stderr)
            store = work / "srv-store"
            _widen_train(args.demo / "postings.jsonl", store, config_path)
            results["server"] = bench_server(store)
        if "memory" in wanted:
            print("memory 1x / 4x ...", file=sys.stderr)
            results["memory"] = bench_memory(args.demo, work, config_path)
    (args.out / "results.json").write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(results, indent=2))


if __name__ == "__main__":
    main()
