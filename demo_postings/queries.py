"""Labelled queries typed as seekers type them, and their relevance judgements.

Every family gets queries of five kinds: `title` (an equivalent title, lower case), `town`
(a title and a town), `noise` (a title with words that name no job: "jobs", "near", "in",
"vacancies"), `shift` (a title with a shift pattern, in one of its spellings) and `typo` (about
one query in ten again, with a slip of the fingers in the title). A noise, shift or typo query
names its `base`: the same query without the noise, the plain title query, or the same query
spelled right, so their recall can be compared.

Relevance respects what the query names: grade 2 for a posting of the family, grade 1 for a
posting of a related family, 0 otherwise; a query that names a town wants postings in that town,
and one that names a shift pattern wants postings that have it. Relevance is judged over the whole
dump; an evaluation counts only the postings its index holds.
"""

from __future__ import annotations

import random
from collections.abc import Sequence
from typing import Any

from demo_postings.families import Family
from demo_postings.postings import typo

__all__ = ["labelled_queries", "SEEKER_PATTERNS"]

#: How seekers type each shift pattern.
SEEKER_PATTERNS = {
    "part time": ["part time", "part-time", "pt"],
    "full time": ["full time", "full-time"],
    "temporary": ["temp", "temporary"],
    "nights": ["nights", "night shift", "night"],
    "weekends": ["weekend", "weekends"],
}
_NOISE_ALONE = ["{t} jobs", "jobs {t}", "{t} vacancies", "{t} jobs near me", "{t} job"]
_NOISE_TOWN = ["{t} near {town}", "{t} jobs in {town}", "{t} in {town}", "{t} jobs {town}"]


def _relevant(
    family: Family,
    title_family: dict[str, str],
    postings: Sequence[dict[str, Any]],
    town: str | None,
    pattern: str | None,
) -> dict[str, int]:
    related = {title_family[r] for r in family.related if r in title_family} - {family.name}
    grades: dict[str, int] = {}
    for p in postings:
        if town is not None and p["location"] != town:
            continue
        if pattern is not None and pattern not in p["_patterns"]:
            continue
        if p["_family"] == family.name:
            grades[p["id"]] = 2
        elif p["_family"] in related:
            grades[p["id"]] = 1
    return dict(sorted(grades.items()))


def _typo_query(text: str, title: str, rng: random.Random) -> str | None:
    """The query with a typo in one word of its title (of four letters or more); None when none has."""
    words = title.split(" ")
    candidates = [i for i, w in enumerate(words) if len(w) >= 4 and w.isalpha()]
    if not candidates:
        return None
    i = rng.choice(candidates)
    for _ in range(5):
        slipped = typo(words[i], rng)
        if slipped != words[i]:
            break
    wrong = " ".join([*words[:i], slipped, *words[i + 1 :]])
    return text.replace(title, wrong, 1)


def labelled_queries(
    families: Sequence[Family], postings: Sequence[dict[str, Any]], towns: Sequence[str], rng: random.Random
) -> list[dict[str, Any]]:
    """Every family's queries of the five kinds, with relevance over `postings`."""
    title_family = {t: f.name for f in families for t in f.equivalent}
    queries: list[dict[str, Any]] = []
    counter: dict[tuple[str, str], int] = {}

    def add(
        family: Family, kind: str, text: str, title: str, town: str | None, pattern: str | None, base: str | None
    ) -> str:
        counter[family.name, kind] = counter.get((family.name, kind), 0) + 1
        qid = f"q-{family.name.replace(' ', '-')}-{kind}-{counter[family.name, kind]}"
        queries.append(
            {
                "id": qid,
                "query": text,
                "family": family.name,
                "kind": kind,
                "title": title,
                "town": town,
                "pattern": pattern,
                "base": base,
                "relevant": _relevant(family, title_family, postings, town, pattern),
            }
        )
        return qid

    for family in families:
        plain = {t: add(family, "title", t, t, None, None, None) for t in family.equivalent}
        title, town = rng.choice(family.equivalent), rng.choice(towns)
        town_id = add(family, "town", f"{title} {town.lower()}", title, town, None, None)
        alone = rng.choice(family.equivalent)
        add(family, "noise", rng.choice(_NOISE_ALONE).format(t=alone), alone, None, None, plain[alone])
        near = rng.choice(_NOISE_TOWN).format(t=title, town=town.lower())
        add(family, "noise", near, title, town, None, town_id)
        pattern = rng.choice(list(SEEKER_PATTERNS))
        spelled, shifted = rng.choice(SEEKER_PATTERNS[pattern]), rng.choice(family.equivalent)
        text = f"{spelled} {shifted}" if rng.random() < 0.5 else f"{shifted} {spelled}"
        add(family, "shift", text, shifted, None, pattern, plain[shifted])
    for query in [q for q in queries if q["kind"] != "typo"]:
        if rng.random() < 0.1:
            family = next(f for f in families if f.name == query["family"])
            slipped = _typo_query(query["query"], query["title"], rng)
            if slipped is not None:
                add(family, "typo", slipped, query["title"], query["town"], query["pattern"], query["id"])
    return queries
