"""The worklist's items and the list itself: what each says, how much traffic it carries, pages."""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any

__all__ = ["REASONS", "Change", "Item", "Worklist"]

#: Why a phrase is on the list, in the order the page shows them, with what each means in words.
REASONS: dict[str, str] = {
    "changed": "its expansions changed against the bundle before (added, removed, weight moved, relation changed)",
    "unsure": "an expansion is one widen is least sure of (just over the bar it had to pass)",
    "coded": "an expansion brings in, or the retrain took out, a title that names the holder's sex or age",
    "coded_wording": "an expansion brings in, or the retrain took out, wording the published list marks as "
    "gender-coded (Gaucher, Friesen & Kay 2011; made for advert text, a weaker signal on titles)",
    "finds_little": "a busy phrase whose words alone find few postings, and widen adds nothing",
    "stale_decision": "a decision in force does nothing now, or repeats what the bundle does by itself",
}


@dataclass(frozen=True)
class Change:
    """One neighbour of a phrase that differs between the bundle before and this one."""

    neighbour: str
    change: str  # added, removed, up, down, relation
    before: float | None
    after: float | None
    relation_before: str | None = None
    relation_after: str | None = None


@dataclass
class Item:
    """One phrase seekers typed (or a decision names), why it is on the list, and its traffic."""

    phrase: str
    searches: float  # a day, over the logged queries that hold the phrase
    reasons: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    changes: list[Change] = field(default_factory=list)
    expansions: list[str] = field(default_factory=list)
    postings_added: int | None = None
    postings_removed: int | None = None
    looked_by: str | None = None
    looked_at: str | None = None

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass
class Worklist:
    """The items of one bundle against the bundle before it, busiest first."""

    version: str
    against: str | None
    searches_per_day: float  # every logged search, a day
    items: list[Item]
    queries: int
    seconds: float = 0.0
    #: For each item's phrase, the logged queries holding it (coverage counts each search once).
    queries_of: dict[str, set[str]] = field(default_factory=dict, repr=False)
    per_day: dict[str, float] = field(default_factory=dict, repr=False)

    def chosen(self, reason: str = "", looked: str = "") -> list[Item]:
        """Items with `reason` (all when empty); `looked` "yes" or "no" filters on the mark."""
        items = [i for i in self.items if not reason or reason in i.reasons]
        if looked in ("yes", "no"):
            items = [i for i in items if (i.looked_by is not None) == (looked == "yes")]
        return items

    def coverage(self, items: list[Item]) -> float:
        """The share of the day's searches whose query holds a phrase of `items` (each search once)."""
        queries = set().union(*(self.queries_of.get(i.phrase, set()) for i in items)) if items else set()
        total = self.searches_per_day
        return sum(self.per_day.get(q, 0.0) for q in queries) / total if total else 0.0

    def looked_share(self) -> float:
        """Of the searches the list's items carry, the share whose items a reviewer has looked at."""
        carried = self.coverage(self.items)
        return self.coverage([i for i in self.items if i.looked_by]) / carried if carried else 0.0

    def counts(self) -> dict[str, int]:
        return {r: sum(r in i.reasons for i in self.items) for r in REASONS}

    def summary(self, busy: float = 100.0) -> str:
        """One line for a nightly log: "412 phrases changed, 38 carrying more than 100 searches a day, 3 coded"."""
        counts = self.counts()
        changed = [i for i in self.items if "changed" in i.reasons]
        heavy = sum(i.searches > busy for i in changed)
        against = f" against {self.against}" if self.against else " (no bundle before it)"
        return (
            f"worklist of {self.version}{against}: {counts['changed']} phrases changed, {heavy} carrying more "
            f"than {busy:g} searches a day, {counts['coded']} coded ({counts['coded_wording']} by advert wording), "
            f"{counts['unsure']} unsure, "
            f"{counts['finds_little']} finding little, {counts['stale_decision']} stale decisions; the top 50 "
            f"items cover {self.coverage(self.items[:50]):.0%} of the day's searches"
        )

    def as_dict(self, items: list[Item] | None = None) -> dict[str, Any]:
        shown = self.items if items is None else items
        return {
            "version": self.version,
            "against": self.against,
            "searches_per_day": round(self.searches_per_day, 2),
            "queries": self.queries,
            "counts": self.counts(),
            "top_50_coverage": round(self.coverage(self.items[:50]), 4),
            "looked_share": round(self.looked_share(), 4),
            "seconds": round(self.seconds, 2),
            "items": [i.as_dict() for i in shown],
        }
