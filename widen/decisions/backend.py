"""Where a store's decisions are kept: the `DecisionStore` interface every backend implements.

Every backend checks decisions the same way (`checked_decision`), keeps the same audit trail, and
exports and imports the same JSON (`EXPORT_FORMAT`, version `EXPORT_VERSION`).
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from typing import Any

from widen.decisions.decision import _RENAMED, EXPORT_FORMAT, EXPORT_VERSION, Decision, DecisionSet, checked_decision
from widen.errors import DecisionError

__all__ = ["Checked", "DecisionStore"]


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

    def add_many(
        self, decisions: list[tuple[str, str, str | None, float | None]], reviewer: str, note: str | None = None
    ) -> list[Decision]:
        """Record several (phrase, action, neighbour, weight) in one transaction, all or none, each with
        its own audit event and the same reviewer and note."""
        rows: list[Checked] = [
            (checked_decision(phrase, action, reviewer, neighbour, weight), action, weight, note)
            for phrase, action, neighbour, weight in decisions
        ]
        return self._insert(rows) if rows else []

    def withdraw_batch(self, batch: str, reviewer: str, note: str | None = None) -> list[Decision]:
        """Withdraw every decision in force recorded in one batch (its note starts `[batch ID]`); each
        withdrawal is in the audit trail. DecisionError when the batch has none in force."""
        tag = f"[batch {batch}]"
        chosen = [d for d in self.entries() if d.note and d.note.startswith(tag)]
        if not batch.strip() or not chosen:
            raise DecisionError(f"no decision in force belongs to batch {batch!r}")
        return [self.withdraw(d.id, reviewer, note) for d in chosen]

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
