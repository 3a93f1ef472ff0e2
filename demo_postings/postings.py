"""Writing one posting of a demo board: each board has its own writer and its own way of writing.

A posting is the public record a dump holds (id, title, description, location, employer,
posted_at) and the generator's own truth, in fields starting with "_": its job family and the
shift patterns it has. No posting states its job's other names outright.
"""

from __future__ import annotations

import random
import re
from datetime import date, timedelta
from typing import Any

from demo_postings import oxmere, tollbridge
from demo_postings.families import Family

__all__ = ["tollbridge_posting", "oxmere_posting", "repost", "display_title", "article", "DUMP_DAYS"]

#: The dump spans this many days before the day it was taken.
DUMP_DAYS = 60

_UPPER = {"rn", "hca", "kp", "hgv", "flt", "ta", "it", "anp", "cnc", "c+e", "rgn", "pcv", "p/t", "f/t", "pt"}


def display_title(title: str) -> str:
    """How an employer writes a title: capitalised words, abbreviations in capitals."""
    words = []
    for word in title.split(" "):
        if word in _UPPER:
            words.append(word.upper())
        elif word in {"de", "of", "and", "to"}:
            words.append(word)
        else:
            words.append(word[:1].upper() + word[1:])
    return " ".join(words)


def article(title: str) -> str:
    spoken_vowel = title[0] in "aeiou" or title.split(" ")[0] in {"rn", "hgv", "flt", "hca", "h.c.a.", "rgn"}
    return "an" if spoken_vowel else "a"


def _fill(template: str, title: str) -> str:
    """Put the title into a sentence, with the article that goes before it."""
    filled = re.sub(r"\b(?:a|an) \{(t|other)\}", f"{article(title)} {title}", template)
    return filled.replace("{t}", title).replace("{other}", title)


def _posted(rng: random.Random, day0: date) -> str:
    return (day0 - timedelta(days=rng.randint(0, DUMP_DAYS))).isoformat()


# -- Tollbridge Valley Jobs ------------------------------------------------------------------

# The patterns a Tollbridge posting's title modifier or hours line gives it.
_TOLLBRIDGE_PATTERNS = {
    "temporary": "temporary",
    "part time": "part time",
    "nights": "nights",
    "night shift": "nights",
    "full time": "full time",
    "weekend work": "weekends",
    "evenings and weekends": "weekends",
}


def _salary(rng: random.Random, sector: str) -> str:
    low, high, unit = rng.choice(tollbridge.SALARY[sector])
    if unit == "hr":
        value = round(rng.uniform(low, high), 2)
        return f"&pound;{value:.2f}/hr"
    a = int(rng.uniform(low, high) / 500) * 500
    b = a + rng.choice([1500, 2500, 3000, 4000])
    return f"&pound;{a:,} - &pound;{b:,}"


def _variant(rng: random.Random, family: Family, bias: int) -> str:
    """Most postings use one variant throughout (the synonym gap); employers lean to one."""
    variants = family.equivalent
    weights = [3 if i == bias % len(variants) else 2 for i in range(len(variants))]
    return rng.choices(variants, weights=weights)[0]


def tollbridge_posting(rng: random.Random, family: Family, number: int, day0: date) -> dict[str, Any]:
    """A Tollbridge Valley posting: one title variant throughout, a minority naming two in the title."""
    sector = family.sector
    employer = rng.choice(
        tollbridge.EMPLOYERS[sector] + ([rng.choice(tollbridge.AGENCIES)] if rng.random() < 0.15 else [])
    )
    town = rng.choice(tollbridge.TOWNS)
    title_variant = _variant(rng, family, tollbridge.HOUSE_STYLE[employer])
    # "hca" has a dotted and a spelled-out form in some postings (word-form trap).
    text_variant = title_variant
    if title_variant == "hca" and rng.random() < 0.3:
        text_variant = rng.choice(["h.c.a.", "health care assistant"])
    title = display_title(title_variant)
    patterns: set[str] = set()
    if rng.random() < 0.3:
        modifier = rng.choice(tollbridge.MODIFIERS)
        title = f"{display_title(modifier)} {title}" if modifier != "nights" else f"{title} - Nights"
        patterns.update(p for m, p in _TOLLBRIDGE_PATTERNS.items() if m == modifier)
    # A minority name a second variant next to the first ("Staff Nurse (RN)").
    if rng.random() < 0.12:
        second = rng.choice([v for v in family.equivalent if v != title_variant])
        title = f"{title} ({display_title(second)})"
    if rng.random() < 0.35:
        title = f"{title} - {town}"

    lines = []
    wanted = f"{article(text_variant)} <strong>{text_variant}</strong>"
    lines.append(f"<p>{employer} in {town} is looking for {wanted} to join us.</p>")
    duties = rng.sample(family.duties, k=min(len(family.duties), rng.randint(2, 4)))
    needs = rng.sample(family.needs, k=min(len(family.needs), rng.randint(1, 2)))
    bullets = [_fill(d, text_variant) for d in duties]
    if family.colleagues and rng.random() < 0.6:
        bullets.append(f"You will work alongside our {rng.choice(family.colleagues)} team.")
    lines.append("<ul>" + "".join(f"<li>{b}</li>" for b in bullets) + "</ul>")
    lines.append("<p>" + " ".join(_fill(n, text_variant) + "." for n in needs) + "</p>")
    lines.append(f"<p>{rng.choice(tollbridge.SECTOR_LINES[sector])}.</p>")
    shift = rng.choice(tollbridge.SHIFTS[sector])
    patterns.update(p for m, p in _TOLLBRIDGE_PATTERNS.items() if m == shift)
    lines.append(f"<p><b>Pay:</b> {_salary(rng, sector)} &nbsp;|&nbsp; <b>Hours:</b> {shift}</p>")
    lines.extend(f"<p>{b}</p>" for b in rng.sample(tollbridge.BOILERPLATE, k=2))
    return {
        "id": f"tvj-{number:06d}",
        "title": title,
        "description": "\n".join(lines),
        "location": town,
        "employer": employer,
        "posted_at": _posted(rng, day0),
        "_family": family.name,
        "_patterns": sorted(patterns),
    }


# -- Oxmere Bay Work -------------------------------------------------------------------------

_NEAR_KEYS = {"a": "s", "e": "r", "i": "o", "o": "p", "n": "m", "r": "t", "s": "a", "t": "y", "l": "k", "c": "v"}
_EQUAL_OPPORTUNITIES = (
    "We welcome applications from everyone and make reasonable adjustments at interview. "
    "Successful applicants will need to provide proof of their right to work."
)
_HOURS = ["Rota over 7 days", "Hours to suit the rota", "37.5 hours a week", "Shifts agreed at interview"]


def typo(word: str, rng: random.Random) -> str:
    """One slip of the fingers in a word of at least four letters: swap, drop, double or a near key."""
    if len(word) < 4 or not word.isalpha():
        return word
    i = rng.randrange(1, len(word) - 1)
    kind = rng.randrange(4)
    if kind == 0:
        return word[:i] + word[i + 1] + word[i] + word[i + 2 :]
    if kind == 1:
        return word[:i] + word[i + 1 :]
    if kind == 2:
        return word[:i] + word[i] + word[i:]
    return word[:i] + _NEAR_KEYS.get(word[i], word[i]) + word[i + 1 :]


def _slips(text: str, rng: random.Random, rate: float = 0.01) -> str:
    """About `rate` of the words of a text get a typo (as a hurried employer types)."""
    return " ".join(typo(w, rng) if rng.random() < rate else w for w in text.split(" "))


def _oxmere_title(rng: random.Random, variant: str, spelled: str | None, town: str) -> str:
    title = display_title(variant)
    if spelled and rng.random() < 0.6:
        shown = display_title(spelled)
        title = rng.choice([f"{shown} {title}", f"{title} ({shown})", f"{title} - {shown}"])
    if rng.random() < 0.3:
        title = f"{title} - {town}"
    if rng.random() < 0.15:
        title = f"{title} | &pound;{rng.uniform(11.5, 16):.2f}ph"
    if rng.random() < 0.1:  # shouted
        title = title.upper() + rng.choice([" - IMMEDIATE START!!", "!!!", " *URGENT*", ""])
    return _slips(title, rng, 0.01)


def oxmere_posting(rng: random.Random, family: Family, number: int, day0: date) -> dict[str, Any]:
    """An Oxmere Bay posting: employers use two or more title variants and name others only in passing,
    paste their own boilerplate verbatim, and spell shift patterns several ways."""
    agency = rng.random() < 0.3
    employer = rng.choice(oxmere.AGENCIES) if agency else rng.choice(oxmere.EMPLOYERS[family.sector])
    town = rng.choice(oxmere.TOWNS)
    style = sum(ord(c) for c in employer)
    variants = family.equivalent
    leaning = [variants[style % len(variants)], variants[(style // 7) % len(variants)]]
    variant = rng.choice(leaning) if rng.random() < 0.8 else rng.choice(variants)
    pattern = rng.choices([None, *oxmere.PATTERN_SPELLINGS], weights=[40, 15, 15, 12, 10, 8])[0]
    spelled = rng.choice(oxmere.PATTERN_SPELLINGS[pattern]) if pattern else None
    title = _oxmere_title(rng, variant, spelled, town)

    def para(text: str) -> str:
        return _slips(text, rng)

    opening = rng.choice(
        [
            f"We are looking for {article(variant)} {variant} to join our team in {town}.",
            f"An exciting opportunity for {article(variant)} {variant} has come up in {town}.",
            f"Could you be our next {variant}? Based in {town}.",
        ]
    )
    parts = [f'<div class="role"><h3>About the role</h3><p>{para(opening)}</p>']
    duties = rng.sample(family.duties, k=min(len(family.duties), rng.randint(2, 4)))
    if rng.random() < 0.5:
        parts.append("<h3>What you&#39;ll be doing</h3><ul>" + "".join(f"<li>{para(d)}</li>" for d in duties) + "</ul>")
    else:
        parts.append("<p><strong>Duties:</strong><br/>" + "<br/>".join(f"- {para(d)}" for d in duties) + "</p>")
    needs = rng.sample(family.needs, k=min(len(family.needs), rng.randint(1, 2)))
    parts.append("<h3>What you&#39;ll need</h3><p>" + " ".join(para(n) + "." for n in needs) + "</p>")
    others = [v for v in variants if v != variant]
    if others and rng.random() < 0.35:
        parts.append(f"<p>{para(_fill(rng.choice(oxmere.PASSING), rng.choice(others)))}</p>")
    hours = spelled if spelled else rng.choice(_HOURS)
    parts.append(f'<p><span style="font-weight:bold">Hours:</span>&nbsp;{hours}</p></div>')
    about = oxmere.AGENCY_ABOUT.format(agency=employer) if agency else oxmere.ABOUT[employer]
    parts.append(f'<div class="about"><p>{about}</p><p>{_EQUAL_OPPORTUNITIES}</p></div>')
    return {
        "id": f"oxb-{number:06d}",
        "title": title,
        "description": "\n".join(parts),
        "location": town,
        "employer": employer,
        "posted_at": _posted(rng, day0),
        "_family": family.name,
        "_patterns": [pattern] if pattern else [],
    }


def repost(rng: random.Random, original: dict[str, Any], number: int, prefix: str) -> dict[str, Any]:
    """The same job posted again (about 5% of a dump): exact, or with only markup or spacing changed."""
    again = dict(original)
    again["id"] = f"{prefix}-{number:06d}"
    if rng.random() < 0.5:
        again["description"] = original["description"].replace("<p>", "<p> ").replace("&nbsp;", " ")
    return again
