"""Real text: the whole pipeline's vectors are as good as gensim's own on texts a package ships.

Data: the Lee background corpus and the English Wikipedia excerpt of gensim's test data, and
WordSim-353 (Finkelstein et al. 2002, "Placing Search in Context: The Concept Revisited"), all
shipped with gensim. The reference is gensim trained directly on the raw text with its own
tokeniser (simple_preprocess); widen gets the same raw text as a dump. `make ablation` measures
every stage in between (README, "Real text").
"""

from __future__ import annotations

import statistics

import pytest

from bench.ablation import documents, gensim_direct, pipeline_vectors, wordsim

# The target of the real-text issue: the whole pipeline within 0.02 Spearman of gensim direct.
TOLERANCE = 0.02


@pytest.mark.parametrize(
    "text, seeds, floor",
    [
        # Lee is small (58,000 words; 60 of WordSim's 353 pairs in vocabulary), so one seed moves
        # Spearman by 0.05: the mean of three seeds is compared.
        ("lee", (1, 2, 3), 0.10),
        # The Wikipedia excerpt (453,000 words) is stable enough for one seed (the ablation's three
        # seeds spread by 0.03), which keeps the test to about a minute.
        ("wiki", (1,), 0.40),
    ],
)
def test_pipeline_is_within_002_of_gensim_direct_on_real_text(text: str, seeds: tuple[int, ...], floor: float) -> None:
    docs = documents(text)
    ours = [wordsim(pipeline_vectors(docs, seed)) for seed in seeds]
    direct = [wordsim(gensim_direct(docs, seed)) for seed in seeds]
    ours_mean = statistics.mean(s for s, _ in ours)
    direct_mean = statistics.mean(s for s, _ in direct)
    # The reference learned what a model of this size learns on this text (figures of `make ablation`).
    assert direct_mean > floor, direct
    assert ours_mean >= direct_mean - TOLERANCE, (ours, direct)
    # Both models are scored on (nearly) the same pairs: widen's de-duplication of repeated documents
    # may cost a word or two its fifth occurrence, no more.
    assert ours[0][1] <= direct[0][1] + 1.0, (ours, direct)
