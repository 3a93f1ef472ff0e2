"""How well expansions match a truth file of job families (a board's `truth.json`, or a team's own).

`scorecard`: for each family, its first equivalent title is expanded (the invented boards' measure).
`query_scorecard`: each labelled title query is expanded, and the figures are given overall, by part
(tune, report) and by frequency band (head, torso, tail) of the query's title (the real-vocabulary
board's measure, where most families never appear in the dump and the tail is where the gap is).

Coverage: the share of the family's other equivalent titles found among the expansions (for
`query_scorecard`, of those the dump uses: a name no posting has cannot be found). Precision: the
share of expansions that are titles of the family or of a related family. Same job: the share of
expansions that are the family's own titles. Equivalent precision: of the expansions hinted
`equivalent`, the share that really are the family's own titles.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence
from dataclasses import dataclass, field
from typing import Any

from widen.decisions.decision import DecisionSet
from widen.evaluation.runs import LabelledQuery
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import expand
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.text.forms import key_of_phrase, phrase_of_text

__all__ = ["scorecard", "query_scorecard"]


@dataclass
class _Tally:
    found: int = 0
    wanted: int = 0
    good: int = 0
    same: int = 0
    offered: int = 0
    eq_right: int = 0
    eq_offered: int = 0
    rel_right: int = 0
    rel_offered: int = 0
    rows: list[dict[str, Any]] = field(default_factory=list)

    def figures(self) -> dict[str, Any]:
        return {
            "coverage": self.found / self.wanted if self.wanted else 0.0,
            "precision": self.good / self.offered if self.offered else 0.0,
            "same_job": self.same / self.offered if self.offered else 0.0,
            "equivalent_precision": self.eq_right / self.eq_offered if self.eq_offered else 0.0,
            "related_precision": self.rel_right / self.rel_offered if self.rel_offered else 0.0,
            "expansions": self.offered,
            "equivalent_hints": self.eq_offered,
            "expanded_queries": sum(1 for r in self.rows if r["expansions"]),
            "queries": len(self.rows),
        }


class _Truth:
    """The families of a truth file, and each title's family, also under the name widen gives a title
    with its leading modifiers taken out ("senior import manager" is an import manager's title)."""

    def __init__(self, truth: dict[str, Any], modifiers: Collection[str] = ()) -> None:
        self.families = {f["name"]: f for f in truth["families"]}
        self.title_family: dict[str, str] = {}
        for family in truth["families"]:
            for title in family["equivalent"]:
                words = phrase_of_text(title).split(" ")
                while len(words) > 1 and words[0] in modifiers:
                    self.title_family.setdefault(" ".join(words[1:]), family["name"])
                    words = words[1:]
        self.title_family.update({phrase_of_text(t): f["name"] for f in truth["families"] for t in f["equivalent"]})

    def own_and_related(self, name: str) -> tuple[list[str], set[str]]:
        family = self.families[name]
        own = [t for t, f in self.title_family.items() if f == name]
        own.sort(key=lambda t: t != phrase_of_text(family["equivalent"][0]))  # its first title first
        related_families = {self.title_family.get(phrase_of_text(r)) for r in family["related"]} - {None}
        related = {t for t, f in self.title_family.items() if f in related_families}
        return own, related | {phrase_of_text(r) for r in family["related"]}


def _count(
    tally: _Tally, query: str, expansions: Sequence[Any], own: list[str], related: set[str], wanted: Collection[str]
) -> None:
    phrases = [e.phrase for e in expansions]
    others = [t for t in own if t != query and t in wanted]
    tally.found += sum(t in phrases for t in others)
    tally.wanted += len(others)
    tally.good += sum(p in own or p in related for p in phrases)
    tally.same += sum(p in own for p in phrases)
    tally.offered += len(phrases)
    for e in expansions:
        if e.relation == "equivalent":
            tally.eq_offered += 1
            tally.eq_right += e.phrase in own
        else:
            tally.rel_offered += 1
            tally.rel_right += e.phrase in related
    tally.rows.append(
        {
            "query": query,
            "expansions": [(e.phrase, e.relation) for e in expansions],
            "missed": [t for t in others if t not in phrases],
            "wrong": [p for p in phrases if p not in own and p not in related],
        }
    )


def scorecard(lexicon: Lexicon, truth: dict[str, Any], options: ExpansionOptions) -> dict[str, Any]:
    """The first equivalent title of every family, expanded and compared with the truth."""
    known = _Truth(truth, options.modifiers)
    cache = ExpansionCache(lexicon)
    tally = _Tally()
    for name, family in known.families.items():
        own, related = known.own_and_related(name)
        result = expand(lexicon, DecisionSet(), family["equivalent"][0], options, cache=cache)
        expansions = [e for s in result.segments for e in s.expansions]
        _count(tally, own[0], expansions, own, related, own)
        tally.rows[-1]["family"] = name
    figures = tally.figures()
    figures["families"] = tally.rows
    return figures


def query_scorecard(
    lexicon: Lexicon, truth: dict[str, Any], queries: Sequence[LabelledQuery], options: ExpansionOptions
) -> dict[str, Any]:
    """Each labelled title query expanded and compared with its family's truth: overall, by part, by
    band and by part and band. Coverage counts the family's names that are titles of this bundle."""
    known = _Truth(truth, options.modifiers)
    cache = ExpansionCache(lexicon)
    uses = {t for t in known.title_family if key_of_phrase(t) in lexicon.title_row or key_of_phrase(t) in lexicon.index}
    tallies: dict[str, _Tally] = {}
    for q in queries:
        if q.kind != "title" or q.family not in known.families:
            continue
        own, related = known.own_and_related(q.family)
        result = expand(lexicon, DecisionSet(), q.query, options, cache=cache)
        expansions = [e for s in result.segments for e in s.expansions if e.source not in ("spelling", "pattern")]
        part, band = q.extra.get("part", ""), q.extra.get("band", "")
        for name in ("all", part, band, f"{part} {band}".strip()):
            if name:
                _count(tallies.setdefault(name, _Tally()), phrase_of_text(q.query), expansions, own, related, uses)
    return {name: t.figures() for name, t in sorted(tallies.items())} | {
        "wrong": [r for r in tallies["all"].rows if r["wrong"]][:50] if "all" in tallies else []
    }
