"""How a phrase is written, and the only code that converts between its forms.

A phrase has three written forms:
- the *phrase*: its tokens joined by one space ("staff nurse"), what people read and decisions key on;
- the *key*: its tokens joined by `PHRASE_JOINER` ("staff_nurse"), the vocabulary entry;
- the *spelling key*: the phrase with connectors, punctuation, spaces and a plural "s" ignored
  ("h.c.a." and "hca" share one), to tell another spelling from another phrase.
"""

from __future__ import annotations

import re

from widen.text.tokenize import tokens

__all__ = [
    "PHRASE_JOINER",
    "phrase_of_text",
    "key_of_phrase",
    "phrase_of_key",
    "key_of_text",
    "words_in",
    "spelling_key",
    "same_spelling",
]

#: How the phrase model joins the words of a phrase into one vocabulary entry.
#: The tokeniser never emits it, so it cannot collide with a corpus token.
PHRASE_JOINER = "_"


def phrase_of_text(text: str) -> str:
    """The phrase of any text: its tokens joined by one space ("Staff Nurse (RN)" -> "staff nurse rn")."""
    return " ".join(tokens(text))


def key_of_phrase(phrase: str) -> str:
    """The vocabulary key of a phrase already in phrase form ("staff nurse" -> "staff_nurse")."""
    return phrase.replace(" ", PHRASE_JOINER)


def phrase_of_key(key: str) -> str:
    """The phrase of a vocabulary key ("staff_nurse" -> "staff nurse")."""
    return key.replace(PHRASE_JOINER, " ")


def key_of_text(text: str) -> str:
    """The vocabulary key any written text would have: its tokens joined as the phrase model joins them."""
    return PHRASE_JOINER.join(tokens(text))


def words_in(key: str) -> int:
    """How many words a vocabulary key (or a phrase) holds."""
    return key.count(PHRASE_JOINER) + key.count(" ") + 1


_FORM_PUNCT = re.compile(r"[.\-'&+/#]")


def spelling_key(phrase: str, connectors: frozenset[str]) -> str:
    """The phrase with connectors, punctuation, spaces and a plural 's' ignored."""
    out = []
    for word in phrase.split(" "):
        if word in connectors:
            continue
        word = _FORM_PUNCT.sub("", word)
        if len(word) > 3 and word.endswith("s") and not word.endswith("ss"):
            word = word[:-1]
        out.append(word)
    return "".join(out)


def same_spelling(a: str, b: str, connectors: frozenset[str]) -> bool:
    """The same words in another spelling ("h.c.a." and "hca", "care assistants" and "care assistant")."""
    return spelling_key(a, connectors) == spelling_key(b, connectors)
