"""Reviewer decisions: block or pin a neighbour for a phrase, or exempt a phrase from expansion.

Decisions live in the store's decisions database (not in a bundle), so they apply at query
time without a retrain and survive retrains. A withdrawal never deletes: the decision stops
applying and every change stays in the audit trail. The expansion core sees only an immutable
`DecisionSet` snapshot; where the decisions are kept is a `DecisionStore`, an interface with
one backend per database (`widen.sqlite_decisions`).

The actions are named for what the reviewer does: *block* one neighbour of a phrase, *pin* one
neighbour (with a weight) to a phrase, *exempt* a phrase from expansion altogether, and
*withdraw* a decision.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import asdict, dataclass, field
from typing import Any, Literal

from widen.errors import DecisionError
from widen.text import phrase_of

__all__ = [
    "Action",
    "ACTIONS",
    "Decision",
    "DecisionSet",
    "DecisionStore",
    "PhraseDecisions",
    "checked_decision",
    "EXPORT_FORMAT",
    "MAX_ID",
]

Action = Literal["block", "pin", "exempt"]
ACTIONS: tuple[str, ...] = ("block", "pin", "exempt")
#: Decision ids are 64-bit signed integers in every backend.
MAX_ID = 2**63 - 1
EXPORT_FORMAT = "widen-decisions"
#: Version 2 names the phrase-wide action `exempt`; version 1 exports called it `never`.
EXPORT_VERSION = 2
_RENAMED = {"never": "exempt"}


@dataclass(frozen=True)
class Decision:
    id: int
    phrase: str
    neighbour: str | None
    action: str
    weight: float | None
    reviewer: str
    note: str | None
    created_at: str
    withdrawn_at: str | None = None
    withdrawn_by: str | None = None

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass(frozen=True)
class PhraseDecisions:
    blocked: frozenset[str] = frozenset()
    pinned: tuple[tuple[str, float], ...] = ()
    exempt: bool = False


_NONE = PhraseDecisions()


@dataclass(frozen=True)
class DecisionSet:
    """What the active decisions say, by phrase; `version` changes whenever they do."""

    version: int = 0
    by_phrase: dict[str, PhraseDecisions] = field(default_factory=dict)

    def get(self, phrase: str) -> PhraseDecisions:
        return self.by_phrase.get(phrase, _NONE)

    @classmethod
    def from_decisions(cls, version: int, decisions: list[Decision]) -> DecisionSet:
        blocked: dict[str, set[str]] = {}
        pinned: dict[str, dict[str, float]] = {}
        exempt: set[str] = set()
        for d in decisions:
            if d.action == "exempt":
                exempt.add(d.phrase)
            elif d.action == "block" and d.neighbour:
                blocked.setdefault(d.phrase, set()).add(d.neighbour)
            elif d.action == "pin" and d.neighbour and d.weight is not None:
                pinned.setdefault(d.phrase, {})[d.neighbour] = d.weight  # the newest pin wins
        phrases = set(blocked) | set(pinned) | exempt
        by_phrase = {
            p: PhraseDecisions(
                frozenset(blocked.get(p, ())),
                tuple(sorted(pinned.get(p, {}).items(), key=lambda kv: (-kv[1], kv[0]))),
                p in exempt,
            )
            for p in phrases
        }
        return cls(version, by_phrase)


def checked_decision(
    phrase: str, action: str, reviewer: str, neighbour: str | None, weight: float | None
) -> tuple[str, str | None, str]:
    """A decision's phrase, neighbour (as phrases) and reviewer, or DecisionError saying what is wrong."""
    phrase_key = phrase_of(phrase)
    neighbour_key = phrase_of(neighbour) if neighbour else None
    if action not in ACTIONS:
        raise DecisionError(f"action must be one of {', '.join(ACTIONS)}, not {action!r}")
    if not phrase_key:
        raise DecisionError("phrase has no words")
    if not reviewer.strip():
        raise DecisionError("reviewer is required")
    if action in ("block", "pin") and not neighbour_key:
        raise DecisionError(f"{action} needs a neighbour")
    if action == "exempt" and neighbour_key:
        raise DecisionError("exempt applies to a whole phrase; leave the neighbour out")
    if action == "pin":
        if not isinstance(weight, (int, float)) or isinstance(weight, bool) or not 0.0 < weight < 1.0:
            raise DecisionError("pin needs a weight between 0 and 1 (the original always weighs 1)")
    elif weight is not None:
        raise DecisionError(f"{action} takes no weight")
    if neighbour_key == phrase_key:
        raise DecisionError("a phrase cannot be its own neighbour")
    return phrase_key, neighbour_key, reviewer.strip()


#: One decision ready to insert: (phrase, neighbour, reviewer), action, weight, note.
Checked = tuple[tuple[str, str | None, str], str, float | None, str | None]


class DecisionStore(ABC):
    """Where a store's decisions are kept. Every backend checks decisions the same way (here) and
    keeps the same audit trail; `stamp()` changes whenever any process changes the decisions."""

    @abstractmethod
    def _insert(self, rows: list[Checked]) -> list[Decision]:
        """Insert every row in one transaction, each with a 'made' audit event; all or none."""

    @abstractmethod
    def withdraw(self, decision_id: int, reviewer: str, note: str | None = None) -> Decision:
        """Withdraw a decision: it stops applying, and stays in the audit trail."""

    @abstractmethod
    def entries(self, include_withdrawn: bool = False) -> list[Decision]:
        """Decisions, oldest first."""

    @abstractmethod
    def audit(self) -> list[dict[str, Any]]:
        """Every change, oldest first: decision_id, event (made, withdrawn), reviewer, note, at."""

    @abstractmethod
    def stamp(self) -> int:
        """A number that changes whenever any process changes the decisions."""

    @abstractmethod
    def snapshot(self) -> DecisionSet:
        """The active decisions, read in one transaction, with the stamp they were read at."""

    def add(
        self,
        phrase: str,
        action: str,
        reviewer: str,
        neighbour: str | None = None,
        weight: float | None = None,
        note: str | None = None,
    ) -> Decision:
        checked = checked_decision(phrase, action, reviewer, neighbour, weight)
        return self._insert([(checked, action, weight, note)])[0]

    @abstractmethod
    def _restore(self, decisions: list[Decision], audit: list[dict[str, Any]]) -> int:
        """Into an empty database: every decision as it was (new ids) and every audit event, pointed
        at the new ids, in one transaction; returns the number of decisions."""

    def export(self, history: bool = False) -> dict[str, Any]:
        """The decisions in force, as JSON another store (of any backend) can import; with `history`,
        also every decision ever made (withdrawn ones too) and the audit trail, for moving a whole
        decisions database to another backend."""
        exported: dict[str, Any] = {
            "format": EXPORT_FORMAT,
            "version": EXPORT_VERSION,
            "decisions": [d.as_dict() for d in self.entries()],
        }
        if history:
            exported["history"] = {
                "decisions": [d.as_dict() for d in self.entries(include_withdrawn=True)],
                "audit": self.audit(),
            }
        return exported

    def _import_history(self, history: Any) -> int:
        if not isinstance(history, dict) or not isinstance(history.get("decisions"), list):
            raise DecisionError("the export's history has no decisions list")
        if not isinstance(history.get("audit"), list):
            raise DecisionError("the export's history has no audit list")
        if self.entries(include_withdrawn=True):
            raise DecisionError("a history can only be imported into an empty decisions database")
        fields = [f for f in Decision.__dataclass_fields__ if f != "id"]
        decisions = []
        for number, item in enumerate(history["decisions"], start=1):
            try:
                checked_decision(item["phrase"], item["action"], item["reviewer"], item["neighbour"], item["weight"])
                decisions.append(Decision(int(item["id"]), *(item[f] for f in fields)))
            except (KeyError, TypeError, ValueError, DecisionError) as exc:
                raise DecisionError(f"history decision {number}: {exc}") from exc
        known = {d.id for d in decisions}
        audit = history["audit"]
        for number, event in enumerate(audit, start=1):
            if not isinstance(event, dict) or event.get("decision_id") not in known:
                raise DecisionError(f"history audit event {number} points at no decision of the history")
            if event.get("event") not in ("made", "withdrawn"):
                raise DecisionError(f"history audit event {number}: unknown event")
        return self._restore(decisions, audit)

    def import_(self, data: dict[str, Any], reviewer: str) -> int:
        """Add the decisions of an export, all or none; returns how many were added. An export with its
        history goes into an empty database as it was (every decision, withdrawn ones too, and the
        audit trail; only the ids change)."""
        if not isinstance(data, dict) or data.get("format") != EXPORT_FORMAT:
            raise DecisionError(f"not a widen decisions export (expected format = {EXPORT_FORMAT})")
        if "history" in data:
            return self._import_history(data["history"])
        items = data.get("decisions")
        if not isinstance(items, list):
            raise DecisionError("export has no decisions list")
        rows: list[Checked] = []
        for number, item in enumerate(items, start=1):
            if not isinstance(item, dict):
                raise DecisionError(f"decision {number} is not an object")
            for key in ("phrase", "action", "neighbour", "note", "reviewer"):
                if item.get(key) is not None and not isinstance(item[key], str):
                    raise DecisionError(f"decision {number}: {key} must be a string")
            if item.get("weight") is not None and (
                isinstance(item["weight"], bool) or not isinstance(item["weight"], (int, float))
            ):
                raise DecisionError(f"decision {number}: weight must be a number")
            action = str(item.get("action", ""))
            action = _RENAMED.get(action, action)
            weight = item.get("weight")
            try:
                checked = checked_decision(str(item.get("phrase", "")), action, reviewer, item.get("neighbour"), weight)
            except DecisionError as exc:
                raise DecisionError(f"decision {number}: {exc}") from exc
            origin = f"imported from decision {item.get('id')} by {item.get('reviewer')}"
            note = f"{item['note']} ({origin})" if item.get("note") else origin
            rows.append((checked, action, weight, note))
        return len(self._insert(rows)) if rows else 0
