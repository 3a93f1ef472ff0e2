"""Building a bundle's worklist from the day's query log (`widen.worklist.querylog`).

Each logged query is read as the serving bundle reads it; each job phrase in it (a segment of kind
phrase, term or unknown, as the seeker typed it) carries the searches of every query it is in. A
phrase is judged **typed alone**, under this bundle and the one before it, with the decisions in
force: the expansions a seeker typing just that phrase gets. (Within a longer query a few filters
also look at the words around it: the phrase view shows a whole query.) A phrase is on the list for
each reason of `widen.worklist.items.REASONS` it meets; a decision's phrase is judged too, logged or
not. Busiest first.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass

from widen.decisions.decision import Decision, DecisionSet
from widen.evaluation.index import SearchIndex
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import expand
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.query_text import JOBS, baseline_text
from widen.expansion.result import Expansion
from widen.text.forms import PHRASE_JOINER, phrase_of_text
from widen.worklist.coded import CodedCheck
from widen.worklist.items import Change, Item, Worklist
from widen.worklist.querylog import QueryLog

__all__ = ["Bundle", "Limits", "build_worklist", "served"]


@dataclass(frozen=True)
class Bundle:
    """A bundle as the worklist reads it: its lexicon and what is kept of it between queries."""

    lexicon: Lexicon
    cache: ExpansionCache


@dataclass(frozen=True)
class Limits:
    """The worklist's thresholds (chosen on Tollbridge Valley's day, `docs/review.md`)."""

    weight_moved: float = 0.05  # a weight moved by more than this is a change
    unsure: float = 0.03  # an expansion less than this over the bar it passed is one widen is least sure of
    few_postings: int = 10  # a phrase whose words alone find fewer postings finds little
    busy: float = 1.0  # searches a day that make a phrase busy


def served(bundle: Bundle, decisions: DecisionSet, phrase: str, options: ExpansionOptions) -> dict[str, Expansion]:
    """The expansions a seeker typing `phrase` alone gets, by neighbour."""
    result = expand(bundle.lexicon, decisions, phrase, options, cache=bundle.cache)
    return {e.phrase: e for s in result.segments if s.kind in JOBS for e in s.expansions}


def _phrases(bundle: Bundle, decisions: DecisionSet, log: QueryLog, options: ExpansionOptions) -> dict[str, set[str]]:
    """Each job phrase of the logged queries, with the queries it is in."""
    queries_of: dict[str, set[str]] = {}
    for query in log.searches:
        result = expand(bundle.lexicon, decisions, query, options, cache=bundle.cache)
        for segment in result.segments:
            if segment.kind in JOBS and (phrase := phrase_of_text(segment.text)):
                queries_of.setdefault(phrase, set()).add(query)
    return queries_of


def _changes(before: dict[str, Expansion], after: dict[str, Expansion], moved: float) -> list[Change]:
    out = []
    for name in sorted(set(before) | set(after)):
        b, a = before.get(name), after.get(name)
        if b is None or a is None:
            kind = "added" if b is None else "removed"
            out.append(Change(name, kind, b.weight if b else None, a.weight if a else None))
        elif a.relation != b.relation:
            out.append(Change(name, "relation", b.weight, a.weight, b.relation, a.relation))
        elif abs(a.weight - b.weight) > moved:
            out.append(Change(name, "up" if a.weight > b.weight else "down", b.weight, a.weight))
    return out


def _unsure(after: dict[str, Expansion], options: ExpansionOptions, margin: float) -> list[str]:
    notes = []
    for e in after.values():
        if e.source in ("model", "composed") and e.similarity - options.min_similarity < margin:
            notes.append(f"'{e.phrase}' is only {e.similarity:.3f} alike, the bar is {options.min_similarity:g}")
        elif e.source == "duties" and e.duties is not None and e.duties - options.related_duties < margin:
            notes.append(f"'{e.phrase}': duties only {e.duties:.3f} alike, the bar is {options.related_duties:g}")
    return notes


def _coded(
    phrase: str, after: dict[str, Expansion], changes: list[Change], check: Callable[[str], list[str]]
) -> list[str]:
    """What `check` finds in the expansions (or in those the retrain took out) and not in the phrase."""
    own = set(check(phrase))
    notes = [f"brings in '{n}': {r}" for n in sorted(after) for r in check(n) if r not in own]
    gone = [c.neighbour for c in changes if c.change == "removed"]
    return notes + [f"no longer brings in '{n}': {r}" for n in gone for r in check(n) if r not in own]


def _alone_count(bundle: Bundle, phrase: str, options: ExpansionOptions, index: SearchIndex | None) -> int:
    """Postings the phrase's words alone find (with an index), or its uses in the dump (without)."""
    if index is not None:
        result = expand(bundle.lexicon, DecisionSet(), phrase, options, cache=bundle.cache)
        return len(index.matching(baseline_text(result, options.operator)))
    row = bundle.lexicon.index.get(phrase.replace(" ", PHRASE_JOINER))
    return int(bundle.lexicon.counts[row]) if row is not None else 0


def _stale(bundle: Bundle, decision: Decision, options: ExpansionOptions) -> str | None:
    if decision.action not in ("block", "pin") or not decision.neighbour:
        return None
    plain = served(bundle, DecisionSet(), decision.phrase, options)
    if decision.action == "block" and decision.neighbour not in plain:
        return (
            f"the block of '{decision.neighbour}' (decision {decision.id}) does nothing: this bundle does not offer it"
        )
    if decision.action == "pin" and decision.neighbour in plain:
        return f"the pin of '{decision.neighbour}' (decision {decision.id}) repeats what this bundle does by itself"
    return None


def _postings_moved(
    now: Bundle, before: Bundle, decisions: DecisionSet, phrase: str, options: ExpansionOptions, index: SearchIndex
) -> tuple[int, int]:
    """Postings the change adds to and removes from the phrase's first 100 results."""
    ids = []
    for bundle in (before, now):
        result = expand(bundle.lexicon, decisions, phrase, options, cache=bundle.cache)
        ids.append({h.id for h in index.search(result.full_query, 100)})
    return len(ids[1] - ids[0]), len(ids[0] - ids[1])


def build_worklist(
    now: Bundle,
    before: Bundle | None,
    active: list[Decision],
    log: QueryLog,
    options: ExpansionOptions,
    *,
    index: SearchIndex | None = None,
    coded: CodedCheck | None = None,
    limits: Limits = Limits(),
    progress: Callable[[int], None] = lambda n: None,
) -> Worklist:
    """The worklist of bundle `now` against `before` (None: no change is flagged), from `log`, with the
    decisions `active` in force (their `looked` marks for `now` say which items were looked at)."""
    started = time.monotonic()
    decisions = DecisionSet.from_decisions(0, active)
    coded = coded or CodedCheck()
    queries_of = _phrases(now, decisions, log, options)
    per_phrase = {p: sum(log.per_day(q) for q in qs) for p, qs in queries_of.items()}
    by_phrase: dict[str, Item] = {}
    for phrase in sorted(set(per_phrase) | {d.phrase for d in active if d.action in ("block", "pin")}):
        item = Item(phrase, per_phrase.get(phrase, 0.0))
        after = served(now, decisions, phrase, options)
        item.expansions = sorted(after, key=lambda n: -after[n].weight)
        if before is not None:
            item.changes = _changes(served(before, decisions, phrase, options), after, limits.weight_moved)
            _flag(item, "changed", [f"{c.change}: '{c.neighbour}'" for c in item.changes])
            if item.changes and index is not None:
                item.postings_added, item.postings_removed = _postings_moved(
                    now, before, decisions, phrase, options, index
                )
        _flag(item, "unsure", _unsure(after, options, limits.unsure))
        _flag(item, "coded", _coded(phrase, after, item.changes, coded.reasons))
        _flag(item, "coded_wording", _coded(phrase, after, item.changes, coded.wording))
        if item.searches >= limits.busy and not after:
            alone = _alone_count(now, phrase, options, index)
            if alone < limits.few_postings:
                _flag(item, "finds_little", [f"its words alone find {alone} postings and widen adds nothing"])
        stale = [s for d in active if d.phrase == phrase and (s := _stale(now, d, options))]
        _flag(item, "stale_decision", stale)
        if item.reasons:
            by_phrase[phrase] = item
        progress(1)
    _looked(by_phrase, active, now.lexicon.version)
    items = sorted(by_phrase.values(), key=lambda i: (-i.searches, i.phrase))
    against = before.lexicon.version if before else None
    per_day = {q: log.per_day(q) for q in log.searches}
    worklist = Worklist(
        now.lexicon.version, against, log.total_per_day, items, len(log.searches), 0.0, queries_of, per_day
    )
    worklist.seconds = time.monotonic() - started
    return worklist


def _flag(item: Item, reason: str, notes: list[str]) -> None:
    if notes:
        item.reasons.append(reason)
        item.notes.extend(notes)


def _looked(items: dict[str, Item], active: list[Decision], version: str) -> None:
    for d in active:
        if d.action == "looked" and d.neighbour == version and d.phrase in items:
            items[d.phrase].looked_by, items[d.phrase].looked_at = d.reviewer, d.created_at
