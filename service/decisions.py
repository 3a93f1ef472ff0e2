"""Reviewer decisions: block or pin a neighbour for a phrase, or never expand a phrase.

They live in the store (not in a bundle), in SQLite with write-ahead logging, so they apply
at query time without a retrain, survive retrains, and several processes can read and write
them at once. Undo never deletes: it marks the decision withdrawn, and every change is in the
audit table. The expansion core sees only an immutable `DecisionSet` snapshot.
"""

from __future__ import annotations

import sqlite3
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

from training.tokenize import tokens

__all__ = [
    "Action",
    "Decision",
    "DecisionSet",
    "DecisionStore",
    "DecisionError",
    "DecisionMissing",
    "DecisionWithdrawn",
    "phrase_form",
]

Action = Literal["block", "pin", "never"]
ACTIONS: tuple[str, ...] = ("block", "pin", "never")
MAX_ID = 2**63 - 1

_SCHEMA = """
CREATE TABLE IF NOT EXISTS decisions (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    phrase TEXT NOT NULL,
    neighbour TEXT,
    action TEXT NOT NULL CHECK (action IN ('block', 'pin', 'never')),
    weight REAL,
    reviewer TEXT NOT NULL,
    note TEXT,
    created_at TEXT NOT NULL,
    withdrawn_at TEXT,
    withdrawn_by TEXT
);
CREATE TABLE IF NOT EXISTS audit (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    decision_id INTEGER NOT NULL,
    event TEXT NOT NULL,
    reviewer TEXT NOT NULL,
    note TEXT,
    at TEXT NOT NULL
);
CREATE INDEX IF NOT EXISTS decisions_phrase ON decisions (phrase);
"""


class DecisionError(ValueError):
    """A decision that cannot be recorded; the message says why."""


class DecisionMissing(DecisionError):
    """No decision has that id."""


class DecisionWithdrawn(DecisionError):
    """The decision was already withdrawn."""


def phrase_form(text: str) -> str:
    """The form decisions are keyed by: the tokeniser's tokens joined by one space."""
    return " ".join(tokens(text))


def _now() -> str:
    return time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())


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
        return {
            "id": self.id,
            "phrase": self.phrase,
            "neighbour": self.neighbour,
            "action": self.action,
            "weight": self.weight,
            "reviewer": self.reviewer,
            "note": self.note,
            "created_at": self.created_at,
            "withdrawn_at": self.withdrawn_at,
            "withdrawn_by": self.withdrawn_by,
        }


@dataclass(frozen=True)
class PhraseDecisions:
    blocked: frozenset[str] = frozenset()
    pinned: tuple[tuple[str, float], ...] = ()
    never: bool = False


@dataclass(frozen=True)
class DecisionSet:
    """What the active decisions say, by phrase form; `version` changes whenever they do."""

    version: int = 0
    by_phrase: dict[str, PhraseDecisions] = field(default_factory=dict)

    def get(self, phrase: str) -> PhraseDecisions:
        return self.by_phrase.get(phrase, _NONE)

    @classmethod
    def from_decisions(cls, version: int, decisions: list[Decision]) -> DecisionSet:
        blocked: dict[str, set[str]] = {}
        pinned: dict[str, dict[str, float]] = {}
        never: set[str] = set()
        for d in decisions:
            if d.action == "never":
                never.add(d.phrase)
            elif d.action == "block" and d.neighbour:
                blocked.setdefault(d.phrase, set()).add(d.neighbour)
            elif d.action == "pin" and d.neighbour and d.weight is not None:
                pinned.setdefault(d.phrase, {})[d.neighbour] = d.weight  # the newest pin wins
        phrases = set(blocked) | set(pinned) | never
        by_phrase = {
            p: PhraseDecisions(
                frozenset(blocked.get(p, ())),
                tuple(sorted(pinned.get(p, {}).items(), key=lambda kv: (-kv[1], kv[0]))),
                p in never,
            )
            for p in phrases
        }
        return cls(version, by_phrase)


_NONE = PhraseDecisions()


class DecisionStore:
    """The decisions database of a store. Parameters: `path`, the SQLite file (created if missing)."""

    def __init__(self, path: Path) -> None:
        self.path = Path(path)

    @contextmanager
    def _connect(self) -> Iterator[sqlite3.Connection]:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        conn = sqlite3.connect(self.path, timeout=10.0, isolation_level=None)
        try:
            conn.execute("PRAGMA journal_mode=WAL")
            conn.execute("PRAGMA synchronous=NORMAL")
            conn.row_factory = sqlite3.Row
            conn.executescript(_SCHEMA)
            yield conn
        finally:
            conn.close()

    # -- writing -------------------------------------------------------------------------

    @staticmethod
    def _checked(
        phrase: str, action: str, reviewer: str, neighbour: str | None, weight: float | None
    ) -> tuple[str, str | None, str]:
        phrase_key = phrase_form(phrase)
        neighbour_key = phrase_form(neighbour) if neighbour else None
        if action not in ACTIONS:
            raise DecisionError(f"action must be one of {', '.join(ACTIONS)}, not {action!r}")
        if not phrase_key:
            raise DecisionError("phrase has no words")
        if not reviewer.strip():
            raise DecisionError("reviewer is required")
        if action in ("block", "pin") and not neighbour_key:
            raise DecisionError(f"{action} needs a neighbour")
        if action == "never" and neighbour_key:
            raise DecisionError("never applies to a whole phrase; leave the neighbour out")
        if action == "pin":
            if not isinstance(weight, (int, float)) or isinstance(weight, bool) or not 0.0 < weight < 1.0:
                raise DecisionError("pin needs a weight between 0 and 1 (the original always weighs 1)")
        elif weight is not None:
            raise DecisionError(f"{action} takes no weight")
        if neighbour_key == phrase_key:
            raise DecisionError("a phrase cannot be its own neighbour")
        return phrase_key, neighbour_key, reviewer.strip()

    @staticmethod
    def _insert(
        conn: sqlite3.Connection,
        checked: tuple[str, str | None, str],
        action: str,
        weight: float | None,
        note: str | None,
    ) -> Decision:
        phrase_key, neighbour_key, reviewer = checked
        created = _now()
        cur = conn.execute(
            "INSERT INTO decisions (phrase, neighbour, action, weight, reviewer, note, created_at)"
            " VALUES (?, ?, ?, ?, ?, ?, ?)",
            (phrase_key, neighbour_key, action, weight, reviewer, note, created),
        )
        decision_id = int(cur.lastrowid or 0)
        conn.execute(
            "INSERT INTO audit (decision_id, event, reviewer, note, at) VALUES (?, 'made', ?, ?, ?)",
            (decision_id, reviewer, note, created),
        )
        return Decision(decision_id, phrase_key, neighbour_key, action, weight, reviewer, note, created)

    def add(
        self,
        phrase: str,
        action: str,
        reviewer: str,
        neighbour: str | None = None,
        weight: float | None = None,
        note: str | None = None,
    ) -> Decision:
        checked = self._checked(phrase, action, reviewer, neighbour, weight)
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            decision = self._insert(conn, checked, action, weight, note)
            conn.execute("COMMIT")
        return decision

    def withdraw(self, decision_id: int, reviewer: str, note: str | None = None) -> Decision:
        """Undo a decision: it stops applying, and stays in the audit trail."""
        if not reviewer.strip():
            raise DecisionError("reviewer is required")
        if not 0 < decision_id <= MAX_ID:  # SQLite's INTEGER is 64-bit signed
            raise DecisionMissing(f"no decision {decision_id}")
        at = _now()
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            row = conn.execute("SELECT * FROM decisions WHERE id = ?", (decision_id,)).fetchone()
            if row is None:
                conn.execute("ROLLBACK")
                raise DecisionMissing(f"no decision {decision_id}")
            if row["withdrawn_at"] is not None:
                conn.execute("ROLLBACK")
                raise DecisionWithdrawn(f"decision {decision_id} was already withdrawn")
            conn.execute(
                "UPDATE decisions SET withdrawn_at = ?, withdrawn_by = ? WHERE id = ?",
                (at, reviewer.strip(), decision_id),
            )
            conn.execute(
                "INSERT INTO audit (decision_id, event, reviewer, note, at) VALUES (?, 'withdrawn', ?, ?, ?)",
                (decision_id, reviewer.strip(), note, at),
            )
            conn.execute("COMMIT")
            row = conn.execute("SELECT * FROM decisions WHERE id = ?", (decision_id,)).fetchone()
        return _decision(row)

    # -- reading -------------------------------------------------------------------------

    def entries(self, include_withdrawn: bool = False) -> list[Decision]:
        if not self.path.exists():
            return []
        where = "" if include_withdrawn else " WHERE withdrawn_at IS NULL"
        with self._connect() as conn:
            rows = conn.execute(f"SELECT * FROM decisions{where} ORDER BY id").fetchall()
        return [_decision(r) for r in rows]

    def audit(self) -> list[dict[str, Any]]:
        if not self.path.exists():
            return []
        with self._connect() as conn:
            rows = conn.execute("SELECT * FROM audit ORDER BY id").fetchall()
        return [dict(r) for r in rows]

    def stamp(self) -> int:
        """A number that changes whenever any process changes the decisions (the audit's last id)."""
        if not self.path.exists():
            return 0
        with self._connect() as conn:
            row = conn.execute("SELECT COALESCE(MAX(id), 0) FROM audit").fetchone()
        return int(row[0])

    def snapshot(self) -> DecisionSet:
        if not self.path.exists():
            return DecisionSet()
        with self._connect() as conn:
            conn.execute("BEGIN")
            stamp = int(conn.execute("SELECT COALESCE(MAX(id), 0) FROM audit").fetchone()[0])
            rows = conn.execute("SELECT * FROM decisions WHERE withdrawn_at IS NULL ORDER BY id").fetchall()
            conn.execute("COMMIT")
        return DecisionSet.from_decisions(stamp, [_decision(r) for r in rows])

    # -- moving between stores -----------------------------------------------------------

    def export(self) -> dict[str, Any]:
        return {"format": "widen-decisions", "version": 1, "decisions": [d.as_dict() for d in self.entries()]}

    def import_(self, data: dict[str, Any], reviewer: str) -> int:
        """Add the decisions of an export, all or none; returns how many were added."""
        if not isinstance(data, dict) or data.get("format") != "widen-decisions":
            raise DecisionError("not a widen decisions export (expected format = widen-decisions)")
        items = data.get("decisions")
        if not isinstance(items, list):
            raise DecisionError("export has no decisions list")
        rows = []
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
            action, weight = str(item.get("action", "")), item.get("weight")
            try:
                checked = self._checked(str(item.get("phrase", "")), action, reviewer, item.get("neighbour"), weight)
            except DecisionError as exc:
                raise DecisionError(f"decision {number}: {exc}") from exc
            origin = f"imported from decision {item.get('id')} by {item.get('reviewer')}"
            note = f"{item['note']} ({origin})" if item.get("note") else origin
            rows.append((checked, action, weight, note))
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            for checked, action, weight, note in rows:
                self._insert(conn, checked, action, weight, note)
            conn.execute("COMMIT")
        return len(rows)


def _decision(row: sqlite3.Row) -> Decision:
    return Decision(
        int(row["id"]),
        row["phrase"],
        row["neighbour"],
        row["action"],
        row["weight"],
        row["reviewer"],
        row["note"],
        row["created_at"],
        row["withdrawn_at"],
        row["withdrawn_by"],
    )
