"""Phrase mining: scores equal the published formulas worked by hand on a tiny corpus."""

from __future__ import annotations

import math

from training.config import PhrasesSection
from training.phrases import learn_phrases
from widen.model.phrases import Phraser

TINY = [
    ["lorry", "driver", "wanted"],
    ["lorry", "driver", "nights"],
    ["van", "driver", "wanted"],
    ["lorry", "driver"],
]
TOTAL_WORDS = 11  # every token counts, connector words included (gensim's corpus_word_count)


def _table(sentences: list[list[str]], **settings: object) -> dict[str, float]:
    config = PhrasesSection.model_validate({"min_count": 1, "max_words": 2, **settings})
    _, rows = learn_phrases(iter(sentences), lambda p: p.stream(sentences), config)
    return {row.phrase: row.score for row in rows}


def test_npmi_equals_bouma_formula_worked_by_hand() -> None:
    # Bouma (2009), "Normalized (Pointwise) Mutual Information in Collocation Extraction":
    # npmi(x, y) = ln(p(x, y) / (p(x) p(y))) / -ln p(x, y), probabilities over corpus words.
    p_lorry, p_driver, p_pair = 3 / TOTAL_WORDS, 4 / TOTAL_WORDS, 3 / TOTAL_WORDS
    expected = math.log(p_pair / (p_lorry * p_driver)) / -math.log(p_pair)
    assert round(expected, 4) == 0.7786  # the same number on paper: ln(11/4) / ln(11/3)
    table = _table(TINY, scoring="npmi", threshold=0.5)
    assert math.isclose(table["lorry_driver"], expected, rel_tol=1e-9)
    # van driver: ln(11/4) / ln(11) = 0.422, under the threshold, so not a phrase.
    assert "van_driver" not in table
    p_wanted, p_dw = 2 / TOTAL_WORDS, 2 / TOTAL_WORDS
    assert math.isclose(table["driver_wanted"], math.log(p_dw / (p_driver * p_wanted)) / -math.log(p_dw))


def test_default_scorer_equals_mikolov_formula_worked_by_hand() -> None:
    # Mikolov et al. (2013), "Distributed Representations of Words and Phrases and their
    # Compositionality": score(a, b) = (count(a b) - delta) / (count(a) count(b)), scaled by the
    # vocabulary size as gensim does; delta is min_count. Vocabulary: 5 words + 4 word pairs.
    expected = (3 - 1) / (3 * 4) * 9
    table = _table(TINY, scoring="default", threshold=1.0)
    assert math.isclose(table["lorry_driver"], expected)


def test_bridge_words_let_titles_like_head_of_care_form() -> None:
    sentences = [["head", "of", "care", "wanted"]] * 5 + [["care", "home"], ["head", "office"]]
    table = _table(sentences, scoring="npmi", threshold=0.3, max_words=3)
    assert "head_of_care" in table


def test_no_phrase_is_longer_than_max_words() -> None:
    sentences = [["night", "shift", "staff", "nurse"]] * 20 + [["staff", "room"], ["night", "bus"]]
    config = PhrasesSection.model_validate({"min_count": 1, "threshold": 0.1, "max_words": 3})
    state = {"s": sentences}

    def again(p: Phraser) -> list[list[str]]:
        state["s"] = [p(s) for s in state["s"]]
        return state["s"]

    phraser, rows = learn_phrases(iter(sentences), again, config)
    assert rows, "expected some phrases"
    assert all(row.phrase.count("_") <= 2 for row in rows)
    assert all(entry.count("_") <= 2 for entry in phraser(["night", "shift", "staff", "nurse"]))


def test_phraser_round_trips_through_plain_json() -> None:
    config = PhrasesSection.model_validate({"min_count": 1, "threshold": 0.5, "max_words": 2})
    phraser, _ = learn_phrases(iter(TINY), lambda p: p.stream(TINY), config)
    again = Phraser.from_json(phraser.to_json())
    for sentence in TINY:
        assert again(sentence) == phraser(sentence)
    assert again(["lorry", "driver", "hensby"]) == ["lorry_driver", "hensby"]
