"""The job title a posting's title field names, without what decorates it.

"Part-Time Care Assistant - Oxmere | £12.10ph" and "CARE ASSISTANT - IMMEDIATE START!!" both
name a care assistant. A title is cut at its separators (" - ", " | ", brackets, "!", ":"), and
from each part the words that are not the job are taken out: the posting's own place and employer,
shift patterns, noise words, modifiers ("senior", "trainee"), numbers. What is left, two words or
more, is a title core; the frequent ones become vocabulary entries even where phrase mining did
not join them, so a three-word title stays one segment ("early years practitioner").
"""

from __future__ import annotations

import re
from collections.abc import Iterable

from widen.text import PHRASE_JOINER, is_number, normalise, tokens

__all__ = ["title_cores"]

_SEPARATORS = re.compile(r"\s[-\u2013\u2014|/~]\s|[|()\[\]{}!?*:;,]")


def title_cores(title: str, drop: frozenset[str], own: Iterable[str], longest: int) -> list[str]:
    """The cores of one title as vocabulary keys. Parameters: the title as written; `drop`, words that
    are never the job (patterns, noise); `own`, the posting's place and employer as written; `longest`,
    the most words a core may have."""
    own_words = {w for value in own for w in tokens(value)}
    cores = []
    for part in _SEPARATORS.split(normalise(title)):
        run: list[str] = []
        for token in [*tokens(part), ""]:
            if token and token not in drop and token not in own_words and not is_number(token):
                run.append(token)
                continue
            if 2 <= len(run) <= longest:
                cores.append(PHRASE_JOINER.join(run))
            run = []
    return cores
