"""The tokeniser: markup, entities, Unicode and the trade tokens that must stay whole."""

from __future__ import annotations

import html
import unicodedata

import pytest

from bench.ablation import documents
from widen.text import tokenize
from widen.text.tokenize import blocks, normalise, sentences, tokens


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


def _by_the_pattern_alone(text: str) -> list[list[list[str]]]:
    """`blocks` without its fast paths or its skipped steps: every normalising step run, every chunk
    through the full token pattern (the reference the fast paths must agree with)."""
    text = tokenize._SCRIPT.sub(" ", text)
    text = tokenize._BLOCK_TAG.sub("\n", text)
    text = tokenize._ANY_TAG.sub(" ", text)
    for _ in range(2):
        decoded = html.unescape(tokenize._SHOUTED_ENTITY.sub(lambda m: m.group(0).lower(), text))
        if decoded == text:
            break
        text = decoded
    text = unicodedata.normalize("NFKC", text).translate(tokenize._QUOTES).casefold()
    out = []
    for line in text.split("\n"):
        block: list[list[str]] = []
        current: list[str] = []
        for chunk in line.split():
            for match in tokenize._TOKEN.finditer(chunk):
                if match.lastgroup == "end":
                    if current:
                        block.append(current)
                    current = []
                else:
                    current.extend(tokenize._compound(match.group()))
        if current:
            block.append(current)
        if block:
            out.append(block)
    return out


def test_fast_paths_agree_with_the_full_pattern_on_real_text() -> None:
    # Real text: the Lee background corpus and the Wikipedia excerpt gensim ships in its test data
    # (bench/ablation.py reads them), plus markup, entities, curly quotes and full-width forms.
    texts = documents("lee") + documents("wiki")[:3000]
    texts += [
        "Caf\u00e9 &amp;amp; Bar <b>Chef</b>. Next, please",
        "&POUND;12 \uff1cp\uff1e x. 12. e.g. ok.",
        "don`t \u2019s \u2018quoted\u2019 Stra\u00dfe",
        "<script>x</script>y <li>care, assistant.</li>",
        "\uff21\uff22\uff23 &lt;li&gt; word, word. , . a. b.",
    ]
    differ = [t for t in texts if blocks(t) != _by_the_pattern_alone(t)]
    assert len(texts) > 3000
    assert differ == []
