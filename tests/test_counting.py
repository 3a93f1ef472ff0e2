"""Counting in runs (`training.counting`) against gensim's own counting, on real text: the ESCO
occupations' names and descriptions (European Commission, demo_postings/data). The references are
gensim's: `Phrases` counting sentence by sentence, and Word2Vec's scan of a corpus file."""

from __future__ import annotations

import functools
import io
import random
from pathlib import Path

import numpy as np
import pytest
from gensim.models import Word2Vec
from gensim.models.phrases import Phrases

from demo_postings.fellhaven import occupations
from training import counting, phrases
from training.config import PhrasesSection, load_config
from training.counting import count_file, pass_counts, word_counts
from training.phrases import ScratchPass, learn_phrases
from training.skipgram import fit_skipgram
from widen.model.phrases import BRIDGE_WORDS, Phraser
from widen.text.forms import PHRASE_JOINER
from widen.text.tokenize import sentences

BRIDGES = frozenset(BRIDGE_WORDS)


@pytest.fixture(scope="module")
def real() -> list[list[str]]:
    """Every ESCO name and description sentence tokenised, with the edge cases a dump brings: empty
    lines, lines of bridge words only, bridge words first and last."""
    rng = random.Random(5)
    out: list[list[str]] = []
    for occupation in occupations():
        out += [s for text in (*occupation.names, *occupation.description) for s in sentences(text)]
    out += [[], ["and", "the"], ["of"], ["the", "head", "of"], ["and", "of", "care", "and", "the"]]
    rng.shuffle(out)
    return out


def _scratch(lines: list[list[str]], path: Path) -> Path:
    """The lines as a scratch corpus (`training.first_pass`): a mark, a tab, the entries."""
    marks = "TDtdP"
    path.write_text("".join(f"{marks[n % 5]}\t{' '.join(s)}\n" for n, s in enumerate(lines)), encoding="utf-8")
    return path


@pytest.mark.parametrize("workers", [1, 2])
def test_a_pass_counted_in_runs_is_what_gensim_counts(
    real: list[list[str]], tmp_path: Path, monkeypatch: pytest.MonkeyPatch, workers: int
) -> None:
    monkeypatch.setattr(counting, "RUN_BYTES", 50_000)  # many runs, and many pieces in each
    monkeypatch.setattr(counting, "_PIECE", 3_000)
    scratch = _scratch(real, tmp_path / "sentences.txt")
    count = functools.partial(pass_counts, bridges=BRIDGES, joiner=PHRASE_JOINER)
    ours = count_file(scratch, count, workers)
    # The reference: gensim's Phrases, counting the same sentences one by one.
    theirs = Phrases(real, min_count=1, delimiter=PHRASE_JOINER, connector_words=BRIDGES)
    assert ours.vocab == theirs.vocab and ours.words == theirs.corpus_word_count
    bridged = [k for k in ours.vocab if "_of_" in k or "_and_" in k]  # "garment_and_textile"
    assert len(bridged) > 1000 and sum(len(s) for s in real) == ours.words > 100_000


def test_a_run_holding_the_mark_is_counted_line_by_line_the_same(real: list[list[str]]) -> None:
    lines = [*real[:3000], ["odd\x02token", "and", "nurse"]]
    text = "".join(f"D\t{' '.join(s)}\n" for s in lines)
    theirs = Phrases(lines, min_count=1, delimiter=PHRASE_JOINER, connector_words=BRIDGES)
    ours = pass_counts(text, BRIDGES, PHRASE_JOINER)
    assert ours.vocab == theirs.vocab and ours.words == theirs.corpus_word_count
    assert ours.vocab["odd\x02token_and_nurse"] == 1


@pytest.mark.parametrize("max_vocab", [40_000_000, 2_000])
def test_passes_learned_from_a_scratch_file_are_gensims(
    real: list[list[str]], tmp_path: Path, monkeypatch: pytest.MonkeyPatch, max_vocab: int
) -> None:
    """Past gensim's vocabulary cap (made small here) the counts are gensim's own, pruned as it prunes."""
    monkeypatch.setattr(phrases, "MAX_VOCAB", max_vocab)
    config = PhrasesSection.model_validate({"min_count": 3, "threshold": 0.4, "max_words": 3})
    scratch = _scratch(real, tmp_path / "sentences.0.txt")

    def again_lines(newest: Phraser) -> list[list[str]]:
        return [newest(s) for s in real]

    def again_file(newest: Phraser) -> ScratchPass:
        def make() -> Path:
            path = tmp_path / "sentences.1.txt"
            return _scratch([newest(line[2:].split()) for line in scratch.open(encoding="utf-8")], path)

        return ScratchPass(make, 2)

    by_gensim, table = learn_phrases(iter(real), again_lines, config)
    in_runs, table_runs = learn_phrases(ScratchPass(lambda: scratch, 2), again_file, config)
    assert in_runs.to_json() == by_gensim.to_json() and table_runs == table
    assert len(table) > (50 if max_vocab > 10**6 else 10)  # phrases were formed (fewer from pruned counts)
    assert any(row.pass_number == 2 for row in table)


def test_word_counts_in_runs_are_word2vecs_scan(
    real: list[list[str]], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(counting, "RUN_BYTES", 40_000)
    long_line = [w for s in real[:4000] for w in s][:25_000]  # three of gensim's sentences of 10,000
    lines = [" ".join(s) for s in real]
    lines[20_000:20_000] = ["", "   ", " ".join(long_line)]
    corpus = tmp_path / "phrased.txt"
    corpus.write_text("\n".join(lines) + "\n", encoding="utf-8")
    model = Word2Vec(min_count=1)
    # The reference: Word2Vec's own scan of the file (gensim's LineSentence), as corpus-file mode runs it.
    total, sentences_made = model.scan_vocab(corpus_file=str(corpus))
    for workers in (1, 2):
        ours = count_file(corpus, word_counts, workers)
        assert list(ours.vocab.items()) == list(model.raw_vocab.items())  # the counts, first met first
        assert (ours.words, ours.sentences) == (total, sentences_made)
    assert sentences_made == len(real) - sum(not s for s in real) + 3  # the long line made three, blanks none


def test_skipgram_from_counts_in_runs_is_gensims_own_call(real: list[list[str]], tmp_path: Path) -> None:
    corpus = tmp_path / "phrased.txt"
    corpus.write_text("".join(" ".join(s) + "\n" for s in real if s), encoding="utf-8")
    config = load_config(None, {"embedding.workers": 1, "embedding.epochs": 2, "embedding.min_count": 3})
    e = config.embedding
    # The reference: gensim's Word2Vec in corpus-file mode, scanning the file itself (one thread, so
    # the run is deterministic).
    theirs = Word2Vec(
        corpus_file=str(corpus), sg=1, hs=0, negative=e.negative, vector_size=e.vector_size, window=e.window,
        min_count=e.min_count, sample=e.sample, alpha=e.alpha, epochs=e.epochs, seed=e.seed, workers=1,
    )  # fmt: skip
    ours = fit_skipgram(corpus, config, io.StringIO(), workers=2)
    assert ours.wv.index_to_key == theirs.wv.index_to_key and len(ours.wv) > 1000
    assert np.array_equal(ours.wv.vectors, theirs.wv.vectors) and np.array_equal(ours.syn1neg, theirs.syn1neg)
