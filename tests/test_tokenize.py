"""The tokeniser: markup, entities, Unicode and the trade tokens that must stay whole."""

from __future__ import annotations

import pytest

from widen.text.tokenize import normalise, sentences, tokens


# Common practice, no source: these spellings are how the trade writes them, and splitting
# them ("c", "e") would make "c+e driver" unfindable.
@pytest.mark.parametrize(
    "text, token",
    [
        # Invented tools of the demo world, written the way the trade writes such names.
        ("Q++ developer", "q++"),
        ("Q# and .QDATA", "q#"),
        ("Q# and .QDATA", ".qdata"),
        ("A&amp;E nurse", "a&e"),
        ("24/7 rota", "24/7"),
        ("C+E driver", "c+e"),
        ("1st line support", "1st"),
        ("Mill.kit developer", "mill.kit"),
        ("K-12 teacher", "k-12"),
        ("H.C.A. wanted", "h.c.a."),
    ],
)
def test_trade_tokens_stay_whole(text: str, token: str) -> None:
    assert token in tokens(text)


def test_markup_is_stripped_and_block_tags_end_sentences() -> None:
    text = (
        "<p>Staff Nurse (RN)</p><ul><li>Hensby Community Hospital</li><li>&pound;24,500 &ndash; &pound;27,000</li></ul>"
    )
    assert sentences(text) == [["staff", "nurse", "rn"], ["hensby", "community", "hospital"], ["24,500", "27,000"]]


def test_script_content_is_not_text() -> None:
    assert tokens("<script>alert('x')</script>Kitchen Porter") == ["kitchen", "porter"]


def test_double_encoded_entities_decode() -> None:
    assert tokens("Heating &amp;amp; Plumbing") == ["heating", "plumbing"]


def test_nfkc_and_case_folding() -> None:
    # NFKC folds the ligature and the full-width letters; casefold folds German sharp s.
    assert tokens("ﬁrst ＨＧＶ Straße") == ["first", "hgv", "strasse"]


def test_sentence_ends_split_but_abbreviation_dots_do_not() -> None:
    assert sentences("Night shift. H.C.A. needed! Apply now") == [
        ["night", "shift"],
        ["h.c.a.", "needed"],
        ["apply", "now"],
    ]


def test_lone_punctuation_is_dropped() -> None:
    assert tokens("forklift / reach truck - & hgv , van") == ["forklift", "reach", "truck", "hgv", "van"]


def test_normalise_is_idempotent_on_plain_text() -> None:
    once = normalise("Lorry Driver – Marrow Quay")
    assert normalise(once) == once
