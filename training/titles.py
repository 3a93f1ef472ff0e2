"""The job title a posting's title field names, without what decorates it.

"Part-Time Care Assistant - Oxmere | £12.10ph" and "CARE ASSISTANT - IMMEDIATE START!!" both
name a care assistant. A title is cut at its separators (" - ", " | ", brackets, "!", ":"), and
from each part the words that are not the job are taken out: the posting's own place and employer,
shift patterns, noise words, modifiers ("senior", "trainee"), numbers (but a short one inside:
"class 1 driver"). What is left, two words or more, is a title core (with its leading modifiers, a
second one); the frequent ones become vocabulary entries even where phrase mining did
not join them, so a three-word title stays one segment ("early years practitioner").
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Iterable

from widen.text.forms import PHRASE_JOINER
from widen.text.tokenize import is_number, normalise, tokens

__all__ = ["title_cores", "is_short_number", "fragments"]

_SEPARATORS = re.compile(r"\s[-\u2013\u2014|/~]\s|[|()\[\]{}!?*:;]")


def is_short_number(token: str) -> bool:
    """A number a title carries inside it ("class 1 driver", "grade 2 welder"): one or two digits."""
    return token.isdigit() and len(token) <= 2


def title_cores(title: str, drop: frozenset[str], own: Iterable[str], longest: int, shortest: int = 2) -> list[str]:
    """The cores of one title as vocabulary keys. Parameters: the title as written; `drop`, words that
    are never the job (patterns, noise, modifiers); `own`, the posting's place and employer as
    written; `longest` and `shortest`, the most and fewest words a core may have (two at least for a
    phrase entry; one for the title a posting names: "baker"). A core is a run of the words left; a
    short number inside a run stays in it ("class 1 driver").

    Modifiers stay out of cores: a board that writes "Bank Order Picker" and "Senior Truck Driver"
    for the same jobs would otherwise split each job into one entry per modifier (tried: on the
    demo board the duties hint lost a third of its precision). Mining still forms a modifier
    phrase that is frequent on its own ("senior carer")."""
    own_words = {w for value in own for w in tokens(value)}
    cores: list[str] = []

    def emit(run: list[str]) -> None:
        while run and is_short_number(run[-1]):
            run = run[:-1]
        if shortest <= len(run) <= longest:
            cores.append(PHRASE_JOINER.join(run))

    for part in _SEPARATORS.split(normalise(title)):
        run: list[str] = []
        for token in [*tokens(part), ""]:
            keep = token and token not in drop and token not in own_words
            if keep and (not is_number(token) or (run and is_short_number(token))):
                run.append(token)
                continue
            emit(run)
            run = []
    return cores


def fragments(in_titles: Counter[str], share: float = 0.2) -> set[str]:
    """Titles that are mostly a piece of longer titles ("pot" of "pot washer", "graduate" of "graduate
    import manager"): seen alone in fewer titles than `share` of the titles that hold them inside a
    longer one. Alone, such a piece is a leftover of a title cut short, not a title with duties of its
    own."""
    spans: Counter[str] = Counter()
    for entry, n in in_titles.items():
        words = entry.split(PHRASE_JOINER)
        for size in range(1, len(words)):
            for i in range(len(words) - size + 1):
                spans[PHRASE_JOINER.join(words[i : i + size])] += n
    return {e for e, inside in spans.items() if e in in_titles and in_titles[e] < share * inside}
