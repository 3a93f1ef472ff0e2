"""A day's query log for a demo board: what seekers typed, in the order they typed it.

The distinct queries are built the way the labelled queries are (`queries.py`): every equivalent
and related title of every family, alone, with a town, with words that name no job ("jobs",
"near", "vacancies"), with a shift pattern in one of its spellings, and about one in ten again
with a slip of the fingers. Each distinct query gets a popularity rank at random, and the day's
queries are drawn with probability proportional to 1 / rank^s (a Zipf-like law, s = 1 by default;
that search queries follow one is common practice, no single source), so a few queries are
typed hundreds of times and most of the distinct ones once. Times spread over one day.

Each line: {"at": "2026-11-30T07:42:05Z", "q": "care assistant jobs near hensby"}.
"""

from __future__ import annotations

import random
from collections.abc import Sequence
from datetime import UTC, date, datetime, time, timedelta
from typing import Any

from demo_postings.families import Family
from demo_postings.postings import typo
from demo_postings.queries import SEEKER_PATTERNS

__all__ = ["distinct_queries", "query_log"]

_NOISE = [
    "{t} jobs",
    "jobs {t}",
    "{t} vacancies",
    "{t} jobs near me",
    "{t} job",
    "{t} near {town}",
    "{t} jobs in {town}",
]


def _slipped(text: str, rng: random.Random) -> str:
    words = text.split(" ")
    long = [i for i, w in enumerate(words) if len(w) >= 4 and w.isalpha()]
    if not long:
        return text
    i = rng.choice(long)
    words[i] = typo(words[i], rng)
    return " ".join(words)


def distinct_queries(families: Sequence[Family], towns: Sequence[str], rng: random.Random) -> list[str]:
    """Every distinct query a seeker of this board might type, in a fixed order, without repeats: each
    title alone, with each town, with words that name no job, with each spelling of each shift pattern
    (before or after it, with or without a town), and about one in ten of those again with a typo."""
    seen: dict[str, None] = {}
    lower_towns = [t.lower() for t in towns]
    spellings = [s for group in SEEKER_PATTERNS.values() for s in group]
    for family in families:
        for title in [*family.equivalent, *family.related]:
            variants = [title, *(f"{title} {town}" for town in lower_towns)]
            variants += [n.format(t=title, town=town) for n in _NOISE for town in lower_towns]
            for spelled in spellings:
                variants += [f"{spelled} {title}", f"{title} {spelled}"]
                variants += [f"{spelled} {title} {town}" for town in lower_towns]
            variants += [_slipped(v, rng) for v in variants if rng.random() < 0.1]
            for v in variants:
                seen.setdefault(v, None)
    return list(seen)


def query_log(
    families: Sequence[Family],
    towns: Sequence[str],
    rng: random.Random,
    size: int = 20000,
    day: date = date(2026, 11, 30),
    exponent: float = 1.0,
) -> list[dict[str, Any]]:
    """`size` queries of one day, drawn from the distinct queries by a Zipf-like popularity, in time order."""
    pool = distinct_queries(families, towns, rng)
    rng.shuffle(pool)  # the popularity rank of each distinct query
    weights = [1.0 / (rank**exponent) for rank in range(1, len(pool) + 1)]
    drawn = rng.choices(pool, weights=weights, k=size)
    start = datetime.combine(day, time(0, 0), tzinfo=UTC)
    seconds = sorted(rng.randrange(86400) for _ in range(size))
    return [
        {"at": (start + timedelta(seconds=s)).strftime("%Y-%m-%dT%H:%M:%SZ"), "q": q}
        for s, q in zip(seconds, drawn, strict=True)
    ]
