"""Training benchmarks: `widen train` against gensim alone, and peak memory on 1x and 4x the postings."""

from __future__ import annotations

import hashlib
import json
import statistics
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

from bench.common import ROOT, widen_train
from demo_postings.generate import generate
from training.config import load_config
from training.corpus import PostingCorpus
from widen.text.tokenize import sentences

__all__ = ["bench_pipeline", "bench_memory"]

_BASELINE = r"""
import json, sys, time
from gensim.models import Word2Vec
from gensim.models.phrases import Phrases
cfg = json.loads(sys.argv[2])
sents = [line.split() for line in open(sys.argv[1], encoding="utf-8")]
started = time.perf_counter()
p = cfg["phrases"]
scoring = "npmi" if p["scoring"] == "npmi" else "default"  # gensim's names for our scorers
for _ in range(p["max_words"] - 1):
    frozen = Phrases(sents, min_count=p["min_count"], threshold=p["threshold"], scoring=scoring,
                     connector_words=frozenset(p["bridge_words"]), delimiter="_").freeze()
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
        ours.append(widen_train(demo / "postings.jsonl", work / f"store-{round_}", config_path))
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
