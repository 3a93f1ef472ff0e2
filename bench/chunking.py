"""`python -m bench.chunking`: where widen's vectors fall behind gensim direct when each Wikipedia article
is one document (5 epochs, 2 worker threads), step by step.

The ablation (`bench/ablation.py`) trains on one paragraph a document, 20 epochs, one thread; a
board's dump has one posting a document, often several paragraphs. Here every row trains skip-gram
with the same parameters and seeds on the same articles and scores WordSim-353 (Finkelstein et al.
2002, gensim's copy) with gensim's `evaluate_word_pairs`; each row changes one thing from the row
above, so the difference between two rows is what that one thing is worth.

    python -m bench.chunking --out build/chunking [--seeds 1,2,3]
"""

from __future__ import annotations

import argparse
import bz2
import json
import statistics
import tempfile
import time
from pathlib import Path
from typing import Any

from gensim.corpora.wikicorpus import extract_pages, filter_wiki
from gensim.models import KeyedVectors, Word2Vec
from gensim.test.utils import datapath
from gensim.utils import simple_preprocess

from bench.ablation import WIKI, pipeline_vectors, wordsim
from bench.common import machine
from widen.text.tokenize import blocks, in_windows

__all__ = ["main"]

PARAMS: dict[str, Any] = {"vector_size": 100, "window": 5, "negative": 5, "min_count": 5, "epochs": 5, "sample": 1e-3}


def articles() -> list[str]:
    """The excerpt's articles, markup removed by gensim's own filter_wiki, one article a document."""
    out = []
    with bz2.open(datapath(WIKI)) as fh:
        for _title, markup, _id in extract_pages(fh, filter_namespaces=("0",)):
            plain = filter_wiki(markup)
            if len(plain) >= 200:
                out.append(plain)
    return out


def _skipgram(sentences: list[list[str]], seed: int, workers: int) -> KeyedVectors:
    return Word2Vec([s for s in sentences if s], sg=1, hs=0, seed=seed, workers=workers, **PARAMS).wv


def _corpus_file(sentences: list[list[str]], seed: int, workers: int) -> KeyedVectors:
    with tempfile.TemporaryDirectory(prefix="widen-chunking-") as tmp:
        path = Path(tmp) / "corpus.txt"
        path.write_text("".join(" ".join(s) + "\n" for s in sentences if s), encoding="utf-8")
        model = Word2Vec(corpus_file=str(path), sg=1, hs=0, seed=seed, workers=workers, **PARAMS)
        return model.wv


def rows(docs: list[str], seed: int) -> dict[str, tuple[float, float]]:
    whole = [simple_preprocess(d) for d in docs]
    paragraphs = [simple_preprocess(p) for d in docs for p in d.split("\n") if p.strip()]
    ours = [blocks(d) for d in docs]
    by_block = [[t for s in block for t in s if in_windows(t)] for doc in ours for block in doc]
    by_article = [[t for block in doc for s in block for t in s if in_windows(t)] for doc in ours]
    found = {
        "gensim direct: simple_preprocess, one article a sentence, 2 threads": _skipgram(whole, seed, 2),
        "the same, one paragraph a sentence (windows stop at a paragraph)": _skipgram(paragraphs, seed, 2),
        "widen's tokeniser, windows over a whole article, 2 threads": _skipgram(by_article, seed, 2),
        "widen's tokeniser, windows over a block (paragraph), 2 threads": _skipgram(by_block, seed, 2),
        "the same from a file (gensim's corpus-file mode, as widen trains), 2 threads": _corpus_file(by_block, seed, 2),
        "the same from a file, 1 thread": _corpus_file(by_block, seed, 1),
        "widen train, 2 threads (phrases, title entries, single words kept, de-duplication)": pipeline_vectors(
            docs, seed, 2
        ),
        "widen train, 1 thread": pipeline_vectors(docs, seed, 1),
    }
    return {name: wordsim(wv) for name, wv in found.items()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--out", type=Path, default=Path("build/chunking"))
    parser.add_argument("--seeds", default="1,2,3")
    args = parser.parse_args()
    seeds = [int(s) for s in args.seeds.split(",")]
    docs = articles()
    started = time.monotonic()
    per_seed = [rows(docs, seed) for seed in seeds]
    result: dict[str, Any] = {
        "machine": machine(),
        "date": time.strftime("%Y-%m-%d"),
        "articles": len(docs),
        "seeds": seeds,
        "params": PARAMS,
        "rows": {},
    }
    for name in per_seed[0]:
        scores = [r[name][0] for r in per_seed]
        result["rows"][name] = {
            "spearman_mean": round(statistics.mean(scores), 4),
            "by_seed": [round(x, 4) for x in scores],
            "oov_percent": round(per_seed[0][name][1], 2),
        }
    result["seconds"] = round(time.monotonic() - started)
    args.out.mkdir(parents=True, exist_ok=True)
    (args.out / "results.json").write_text(json.dumps(result, indent=2) + "\n", encoding="utf-8")
    lines = ["| row | Spearman (mean) | by seed | pairs out of vocabulary |", "|---|---|---|---|"]
    for name, row in result["rows"].items():
        by_seed = ", ".join(f"{x:.3f}" for x in row["by_seed"])
        lines.append(f"| {name} | {row['spearman_mean']:.3f} | {by_seed} | {row['oov_percent']:.1f}% |")
    (args.out / "table.md").write_text("\n".join(lines) + "\n", encoding="utf-8")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
