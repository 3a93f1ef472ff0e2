"""`make ablation`: widen's vectors on real text, stage by stage, against gensim trained directly.

Texts: the Lee background corpus and the English Wikipedia excerpt of gensim's test data (the
articles of `enwiki-latest-pages-articles1...-shortened.bz2`, markup removed by gensim's own
`filter_wiki`, one paragraph a document). Score: Spearman correlation on WordSim-353
(Finkelstein et al. 2002, shipped in gensim's test data) through gensim's `evaluate_word_pairs`,
with the share of its pairs out of vocabulary. Every stage trains skip-gram with the same
parameters and seeds, one worker thread (repeatable), and reports the mean of the seeds.

    python -m bench.ablation --out build/ablation [--seeds 1,2,3] [--texts lee,wiki]
"""

from __future__ import annotations

import argparse
import bz2
import io
import json
import re
import statistics
import tempfile
import time
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

from gensim.corpora.wikicorpus import extract_pages, filter_wiki
from gensim.models import KeyedVectors, Word2Vec
from gensim.test.utils import datapath
from gensim.utils import simple_preprocess

from bench.common import machine
from training.config import PhrasesSection, load_config
from training.phrases import learn_phrases
from training.pipeline import train
from widen.model.phrases import Phraser
from widen.model.store import Store
from widen.text.tokenize import blocks, in_windows, normalise

__all__ = ["main", "documents", "wordsim", "pipeline_vectors", "gensim_direct", "PARAMS"]

#: The skip-gram parameters of every stage (gensim's defaults, but 20 epochs for small texts).
PARAMS: dict[str, Any] = {"vector_size": 100, "window": 5, "negative": 5, "min_count": 5, "epochs": 20, "sample": 1e-3}
WIKI = "enwiki-latest-pages-articles1.xml-p000000010p000030302-shortened.bz2"


def documents(text: str) -> list[str]:
    """The documents of one real text: Lee's lines, or the paragraphs of the Wikipedia articles."""
    if text == "lee":
        return Path(datapath("lee_background.cor")).read_text(encoding="utf-8").splitlines()
    out: list[str] = []
    with bz2.open(datapath(WIKI)) as fh:
        for _title, markup, _id in extract_pages(fh, filter_namespaces=("0",)):
            plain = filter_wiki(markup)
            if len(plain) >= 200:
                out.extend(p for p in plain.split("\n") if p.strip())
    return out


def wordsim(wv: KeyedVectors) -> tuple[float, float]:
    """Spearman on WordSim-353 and the percentage of its pairs out of vocabulary (gensim's own evaluation)."""
    _pearson, spearman, oov = wv.evaluate_word_pairs(datapath("wordsim353.tsv"))
    return float(spearman[0]), float(oov)


# The tokeniser as it was before this ablation's fixes, for the rows that show what each fix is worth:
# hyphenated and apostrophed words were kept whole ("left-wing", "it's").
_OLD_TOKEN = re.compile(
    r"(?P<abbr>(?<![\w.])(?:[^\W\d_]\.){2,}(?![\w]))|(?P<dot>(?<![\w.])\.[^\W\d_]\w*(?![\w.]))"
    r"|(?P<word>[^\W_]+(?:(?:[.&+\-']|(?<=\d)[/,](?=\d))[^\W_]+)*[+#]*)|(?P<end>[.!?;]+(?=\s|$)|\n)"
)


def _old_blocks(text: str) -> list[list[list[str]]]:
    out = []
    for line in normalise(text).split("\n"):
        block: list[list[str]] = []
        current: list[str] = []
        for match in _OLD_TOKEN.finditer(line):
            if match.lastgroup == "end":
                if current:
                    block.append(current)
                    current = []
            else:
                current.append(match.group())
        if current:
            block.append(current)
        if block:
            out.append(block)
    return out


Blocks = list[list[list[list[str]]]]  # documents -> blocks -> sentences -> tokens


def _sentences(docs: Blocks, keep: Callable[[str], bool]) -> list[list[str]]:
    """Windows bounded by sentences, as before: one training sentence a sentence."""
    return [[t for t in s if keep(t)] for doc in docs for block in doc for s in block]


def _by_block(docs: Blocks, keep: Callable[[str], bool], phraser: Phraser | None = None) -> list[list[str]]:
    """Windows spanning the sentences of a block; phrases applied sentence by sentence."""
    apply = phraser or (lambda s: s)
    return [[t for s in block for t in apply(s) if keep(t)] for doc in docs for block in doc]


def _skipgram(sentences: Iterable[list[str]], seed: int) -> KeyedVectors:
    model = Word2Vec([s for s in sentences if s], sg=1, hs=0, seed=seed, workers=1, **PARAMS)
    return model.wv


def gensim_direct(docs: list[str], seed: int) -> KeyedVectors:
    """The reference: gensim trained directly on the raw text, tokenised by gensim's own simple_preprocess."""
    return _skipgram((simple_preprocess(d) for d in docs), seed)


def pipeline_vectors(docs: list[str], seed: int, workers: int = 1) -> KeyedVectors:
    """widen's vectors: the raw text as a dump, through `widen train` with the same skip-gram parameters
    (`workers` skip-gram threads)."""
    with tempfile.TemporaryDirectory(prefix="widen-ablation-") as tmp:
        corpus = Path(tmp) / "text.jsonl"
        with corpus.open("w", encoding="utf-8") as fh:
            for i, doc in enumerate(docs):
                fh.write(json.dumps({"id": f"doc-{i}", "title": "", "description": doc}) + "\n")
        overrides: dict[str, Any] = {f"embedding.{k}": v for k, v in PARAMS.items()}
        overrides |= {"embedding.seed": seed, "embedding.workers": workers, "gate.min_score": 0.0}
        overrides["corpus.max_bad_fraction"] = 0.5  # paragraphs of markup only tokenise to nothing
        train(corpus, Path(tmp) / "store", load_config(None, overrides), out=io.StringIO())
        vectors: KeyedVectors = Store(Path(tmp) / "store").open_bundle().vectors
        return vectors


def stages(docs: list[str], seed: int) -> dict[str, tuple[float, float]]:
    """Every stage's WordSim score for one seed."""
    old, new = [_old_blocks(d) for d in docs], [blocks(d) for d in docs]
    phrases_config = PhrasesSection()
    flat = [s for doc in new for block in doc for s in block]
    phraser, _ = learn_phrases(iter(flat), lambda p: p.stream(flat), phrases_config)
    everything: Callable[[str], bool] = lambda t: True  # noqa: E731
    results = {
        "gensim direct (its simple_preprocess, one paragraph a document)": gensim_direct(docs, seed),
        "widen tokeniser as before: compounds whole, numbers kept, sentence windows": _skipgram(
            _sentences(old, everything), seed
        ),
        "+ compounds split (part-time is part time)": _skipgram(_sentences(new, everything), seed),
        "+ numbers and lone letters out of the windows": _skipgram(_sentences(new, in_windows), seed),
        "+ windows span a block's sentences (widen's tokeniser, no phrases)": _skipgram(
            _by_block(new, in_windows), seed
        ),
        "+ phrases (NPMI passes, the default config)": _skipgram(_by_block(new, in_windows, phraser), seed),
        "the whole pipeline (widen train: + single words keep vectors, de-duplication)": pipeline_vectors(docs, seed),
    }
    return {name: wordsim(wv) for name, wv in results.items()}


def run(text: str, seeds: list[int]) -> dict[str, Any]:
    docs = documents(text)
    started = time.monotonic()
    per_seed = [stages(docs, seed) for seed in seeds]
    rows: dict[str, dict[str, Any]] = {}
    for name in per_seed[0]:
        scores = [r[name][0] for r in per_seed]
        rows[name] = {
            "spearman_mean": round(statistics.mean(scores), 4),
            "spearman_by_seed": [round(x, 4) for x in scores],
            "oov_percent": round(per_seed[0][name][1], 2),
        }
    direct = float(next(iter(rows.values()))["spearman_mean"])
    for row in rows.values():
        row["minus_gensim_direct"] = round(row["spearman_mean"] - direct, 4)
    words = sum(len(simple_preprocess(d)) for d in docs)
    return {"documents": len(docs), "words": words, "seconds": round(time.monotonic() - started), "stages": rows}


def markdown(results: dict[str, Any]) -> str:
    lines = []
    for text, result in results["texts"].items():
        lines += [
            f"**{text}** ({result['documents']} documents, {result['words']} words; seeds {results['seeds']})",
            "",
            "| stage | Spearman (mean) | minus gensim direct | by seed | WordSim pairs out of vocabulary |",
            "|---|---|---|---|---|",
        ]
        for name, row in result["stages"].items():
            seeds = ", ".join(f"{x:.3f}" for x in row["spearman_by_seed"])
            lines.append(
                f"| {name} | {row['spearman_mean']:.3f} | {row['minus_gensim_direct']:+.3f} | {seeds} "
                f"| {row['oov_percent']:.1f}% |"
            )
        lines.append("")
    return "\n".join(lines)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--out", type=Path, default=Path("build/ablation"))
    parser.add_argument("--seeds", default="1,2,3")
    parser.add_argument("--texts", default="lee,wiki")
    args = parser.parse_args()
    seeds = [int(s) for s in args.seeds.split(",")]
    results: dict[str, Any] = {"machine": machine(), "date": time.strftime("%Y-%m-%d"), "seeds": seeds, "texts": {}}
    for text in args.texts.split(","):
        print(f"{text} ...", flush=True)
        results["texts"][text] = run(text, seeds)
    args.out.mkdir(parents=True, exist_ok=True)
    (args.out / "results.json").write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    (args.out / "table.md").write_text(markdown(results), encoding="utf-8")
    print(markdown(results))


if __name__ == "__main__":
    main()
