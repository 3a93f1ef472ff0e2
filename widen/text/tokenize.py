"""The one tokeniser of widen, for postings and queries alike.

Postings at training time and queries at serving time go through the same steps, so a
query token is spelled exactly as the corpus token it should match: HTML tags stripped
(block tags end a sentence), entities decoded, Unicode NFKC, case-folded, split into
sentences, then into tokens. Trade tokens stay whole (q++, q#, .qdata, a&e, 24/7, c+e, 1st,
mill.kit, k-12, h.c.a.); lone punctuation is dropped. A hyphenated compound is its words
("part-time" is "part time", "left-wing" is "left wing"), and so are contractions and
possessives ("employer's" is "employer s"), unless a part holds a digit ("k-12", "covid-19").
"""

from __future__ import annotations

import html
import re
import unicodedata

__all__ = ["normalise", "blocks", "sentences", "tokens", "in_windows", "is_number"]

_BLOCK_TAG = re.compile(
    r"<\s*/?\s*(?:p|br|li|ul|ol|div|h[1-6]|tr|td|th|table|section|article|header|footer|hr)\b[^>]*>",
    re.IGNORECASE,
)
_ANY_TAG = re.compile(r"<[^>]{0,2000}>")
_SCRIPT = re.compile(r"<\s*(script|style)\b.*?<\s*/\s*\1\s*>", re.IGNORECASE | re.DOTALL)
_QUOTE_CHARS = ("\u2018", "\u2019", "\u201b", "\u2032", "`")
_QUOTES = str.maketrans(dict.fromkeys(_QUOTE_CHARS, "'"))

# One alternation, tried left to right at each position:
#   1. dotted abbreviations: h.c.a., e.g.
#   2. leading-dot names: .qdata
#   3. words with inner joiners: c+e, a&e, mill.kit, k-12, 24/7, 24,500, 12.40, we're, a slash
#      between two lone letters (p/t, f/t), and trailing + or # (q++, q#)
#   4. a sentence end: . ! ? ; or a line break
_TOKEN = re.compile(
    r"""
    (?P<abbr>(?<![\w.])(?:[^\W\d_]\.){2,}(?![\w]))
  | (?P<dot>(?<![\w.])\.[^\W\d_]\w*(?![\w.]))
  | (?P<word>[^\W_]+(?:(?:[.&+\-']|(?<=\d)[/,](?=\d)|(?<=\b[^\W\d_])/(?=[^\W\d_]\b))[^\W_]+)*[+#]*)
  | (?P<end>[.!?;]+(?=\s|$)|\n)
    """,
    re.VERBOSE,
)


_SHOUTED_ENTITY = re.compile(r"&[A-Z][A-Z]+;")


def normalise(text: str) -> str:
    """Markup-free, entity-decoded, NFKC, case-folded text; block tags become line breaks."""
    # Each step is skipped where the text holds nothing it could change (most text has no markup,
    # no entity and no curly quote): the same result, a third of the time.
    if "<" in text:
        text = _SCRIPT.sub(" ", text)
        text = _BLOCK_TAG.sub("\n", text)
        text = _ANY_TAG.sub(" ", text)
    # Entities may be double-encoded in reposted postings ("&amp;amp;"), and shouted in a title
    # written in capitals after the markup ("&POUND;"), which HTML's own names do not cover.
    for _ in range(2 if "&" in text else 0):
        decoded = html.unescape(_SHOUTED_ENTITY.sub(lambda m: m.group(0).lower(), text))
        if decoded == text:
            break
        text = decoded
    text = unicodedata.normalize("NFKC", text)
    if any(quote in text for quote in _QUOTE_CHARS):
        text = text.translate(_QUOTES)
    return text.casefold()


def blocks(text: str) -> list[list[list[str]]]:
    """Text as blocks (a paragraph, a list item, a line) of sentences of tokens; empty ones left out.

    Phrases never span a sentence; skip-gram windows span the sentences of one block.
    """
    out: list[list[list[str]]] = []
    for line in normalise(text).split("\n"):
        block: list[list[str]] = []
        current: list[str] = []
        for chunk in line.split():
            if chunk.isalnum():
                # Fast paths for the common plain word, alone or before a comma or full stop: the
                # same result as the full pattern.
                current.append(chunk)
                continue
            if chunk[-1] in ",." and chunk[:-1].isalnum():
                current.append(chunk[:-1])
                if chunk[-1] == ".":
                    block.append(current)
                    current = []
                continue
            for match in _TOKEN.finditer(chunk):
                if match.lastgroup == "end":
                    if current:
                        block.append(current)
                        current = []
                else:
                    current.extend(_compound(match.group()))
        if current:
            block.append(current)
        if block:
            out.append(block)
    return out


def sentences(text: str) -> list[list[str]]:
    """Split text into sentences of tokens; empty sentences are left out."""
    return [sentence for block in blocks(text) for sentence in block]


_COMPOUND = re.compile(r"[-']")


def _compound(word: str) -> list[str]:
    """A hyphenated or apostrophed word as its parts, unless a part holds a digit (k-12 stays whole)."""
    if ("-" not in word and "'" not in word) or any(ch.isdigit() for ch in word):
        return [word]
    return [part for part in _COMPOUND.split(word) if part]


# A number, alone or with a unit glued on ("24,500", "2026", "12.40ph", "37.5hrs", "40k"); an ordinal
# (1st, 2nd) is a word of the trade ("1st line support") and not a number here.
_NUMBER = re.compile(r"^\d[\d.,:]*(?!st$|nd$|rd$|th$)[a-z]{0,3}$")


def is_number(token: str) -> bool:
    """A number, alone or with a short unit glued on; not an ordinal, not a trade token (24/7, c+e)."""
    return bool(_NUMBER.match(token))


def in_windows(entry: str) -> bool:
    """Whether skip-gram sees an entry: not a number (with or without a unit) nor a single character.

    Numbers and lone letters carry no meaning of their own in a window and crowd out the words
    around them; trade tokens (q++, q#, 24/7, c+e, 1st) and phrases holding a number ("class 1")
    are kept.
    """
    return len(entry) > 1 and not _NUMBER.match(entry)


def tokens(text: str) -> list[str]:
    """All tokens of text in order, sentence breaks ignored (used for queries)."""
    return [tok for sentence in sentences(text) for tok in sentence]
