"""How well expansions match a truth file of job families (the demo's `truth.json`, or a team's own).

For each family, the first equivalent title is expanded. Coverage: the share of the family's
other equivalent titles found among the expansions. Precision: the share of expansions that
are titles of the family or of a related family. Same job: the share of expansions that are the
family's own titles. Equivalent precision: of the expansions hinted `equivalent`, the share that
really are the family's own titles.
"""

from __future__ import annotations

from typing import Any

from widen.decisions.decision import DecisionSet
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import expand
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.text.forms import phrase_of_text

__all__ = ["scorecard"]


def scorecard(lexicon: Lexicon, truth: dict[str, Any], options: ExpansionOptions) -> dict[str, Any]:
    families = truth["families"]
    cache = ExpansionCache(lexicon)
    title_family = {phrase_of_text(t): f["name"] for f in families for t in f["equivalent"]}
    found = wanted = good = same = offered = eq_right = eq_offered = rel_right = rel_offered = 0
    rows = []
    for family in families:
        own = [phrase_of_text(t) for t in family["equivalent"]]
        related_families = {title_family.get(phrase_of_text(r)) for r in family["related"]} - {None}
        related = {t for t, f in title_family.items() if f in related_families} | {
            phrase_of_text(r) for r in family["related"]
        }
        result = expand(lexicon, DecisionSet(), family["equivalent"][0], options, cache=cache)
        expansions = [e for s in result.segments for e in s.expansions]
        phrases = [e.phrase for e in expansions]
        hits = [t for t in own[1:] if t in phrases]
        found += len(hits)
        wanted += len(own) - 1
        right = [p for p in phrases if p in own or p in related]
        good += len(right)
        same += sum(p in own for p in phrases)
        offered += len(phrases)
        for e in expansions:
            if e.relation == "equivalent":
                eq_offered += 1
                eq_right += e.phrase in own
            else:
                rel_offered += 1
                rel_right += e.phrase in related
        rows.append(
            {
                "family": family["name"],
                "query": family["equivalent"][0],
                "expansions": [(e.phrase, e.relation) for e in expansions],
                "missed": [t for t in own[1:] if t not in phrases],
                "wrong": [p for p in phrases if p not in own and p not in related],
            }
        )
    return {
        "coverage": found / wanted if wanted else 0.0,
        "precision": good / offered if offered else 0.0,
        "same_job": same / offered if offered else 0.0,
        "equivalent_precision": eq_right / eq_offered if eq_offered else 0.0,
        "related_precision": rel_right / rel_offered if rel_offered else 0.0,
        "expansions": offered,
        "equivalent_hints": eq_offered,
        "families": rows,
    }
