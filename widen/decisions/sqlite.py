"""Reviewer decisions in SQLite with write-ahead logging: the embedded default, nothing to set up.

Several processes of one host can read and write at once (SQLite's locking); SQLite over a
network filesystem is not safe, so replicas on several hosts share a database server instead.
The schema is versioned (`PRAGMA user_version`) and migrated forward when a store is opened.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from widen.clock import utc_stamp
from widen.decisions.backend import Checked, DecisionStore
from widen.decisions.decision import MAX_ID, Decision, DecisionSet
from widen.errors import DecisionError, DecisionMissing, DecisionWithdrawn

__all__ = ["SqliteDecisionStore", "SCHEMA_VERSION"]

SCHEMA_VERSION = 3

_DECISIONS = """
CREATE TABLE IF NOT EXISTS decisions (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    phrase TEXT NOT NULL,
    neighbour TEXT,
    action TEXT NOT NULL CHECK (action IN ('block', 'pin', 'exempt', 'looked')),
    weight REAL,
    reviewer TEXT NOT NULL,
    note TEXT,
    created_at TEXT NOT NULL,
    withdrawn_at TEXT,
    withdrawn_by TEXT
);
"""
_AUDIT = """
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
_COLUMNS = "id, phrase, neighbour, action, weight, reviewer, note, created_at, withdrawn_at, withdrawn_by"


def _migrate(conn: sqlite3.Connection) -> None:
    """Bring the schema to SCHEMA_VERSION, forward only, in one transaction."""
    version = int(conn.execute("PRAGMA user_version").fetchone()[0])
    if version >= SCHEMA_VERSION:
        return
    conn.execute("BEGIN IMMEDIATE")
    version = int(conn.execute("PRAGMA user_version").fetchone()[0])  # another process may have done it
    if version < SCHEMA_VERSION:
        exists = conn.execute("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'decisions'").fetchone()
        if exists is None:
            conn.execute(_DECISIONS)
        elif version < 3:
            # Version 2 renamed the phrase-wide action 'never' to 'exempt', version 3 added 'looked' (a
            # worklist item looked at); SQLite cannot alter a CHECK constraint, so the table is copied
            # (ids kept, so the audit trail still points right).
            conn.execute("ALTER TABLE decisions RENAME TO decisions_v1")
            conn.execute(_DECISIONS)
            conn.execute(
                f"INSERT INTO decisions ({_COLUMNS}) SELECT id, phrase, neighbour,"
                " CASE action WHEN 'never' THEN 'exempt' ELSE action END,"
                f" weight, reviewer, note, created_at, withdrawn_at, withdrawn_by FROM decisions_v1"
            )
            conn.execute("DROP TABLE decisions_v1")
        for statement in _AUDIT.split(";"):
            if statement.strip():
                conn.execute(statement)
        conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION}")
    conn.execute("COMMIT")


class SqliteDecisionStore(DecisionStore):
    """The decisions of a store in SQLite. Parameters: `path`, the database file (created if missing)."""

    def __init__(self, path: Path) -> None:
        self.path = Path(path)

    def __repr__(self) -> str:
        return f"SqliteDecisionStore({str(self.path)!r})"

    @contextmanager
    def _connect(self) -> Iterator[sqlite3.Connection]:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        conn = sqlite3.connect(self.path, timeout=10.0, isolation_level=None)
        try:
            conn.execute("PRAGMA journal_mode=WAL")
            conn.execute("PRAGMA synchronous=NORMAL")
            conn.row_factory = sqlite3.Row
            _migrate(conn)
            yield conn
        finally:
            conn.close()

    def _insert(self, rows: list[Checked]) -> list[Decision]:
        made = []
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            for (phrase, neighbour, reviewer), action, weight, note in rows:
                created = utc_stamp()
                cur = conn.execute(
                    "INSERT INTO decisions (phrase, neighbour, action, weight, reviewer, note, created_at)"
                    " VALUES (?, ?, ?, ?, ?, ?, ?)",
                    (phrase, neighbour, action, weight, reviewer, note, created),
                )
                decision_id = int(cur.lastrowid or 0)
                conn.execute(
                    "INSERT INTO audit (decision_id, event, reviewer, note, at) VALUES (?, 'made', ?, ?, ?)",
                    (decision_id, reviewer, note, created),
                )
                made.append(Decision(decision_id, phrase, neighbour, action, weight, reviewer, note, created))
            conn.execute("COMMIT")
        return made

    def _restore(self, decisions: list[Decision], audit: list[dict[str, Any]]) -> int:
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            if conn.execute("SELECT 1 FROM decisions LIMIT 1").fetchone() is not None:
                conn.execute("ROLLBACK")
                raise DecisionError("a history can only be imported into an empty decisions database")
            new_ids = {}
            for d in decisions:
                cur = conn.execute(
                    f"INSERT INTO decisions ({_COLUMNS.split(', ', 1)[1]}) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                    (
                        d.phrase,
                        d.neighbour,
                        d.action,
                        d.weight,
                        d.reviewer,
                        d.note,
                        d.created_at,
                        d.withdrawn_at,
                        d.withdrawn_by,
                    ),
                )
                new_ids[d.id] = int(cur.lastrowid or 0)
            for e in audit:
                conn.execute(
                    "INSERT INTO audit (decision_id, event, reviewer, note, at) VALUES (?, ?, ?, ?, ?)",
                    (new_ids[e["decision_id"]], e["event"], e["reviewer"], e.get("note"), e["at"]),
                )
            conn.execute("COMMIT")
        return len(decisions)

    def withdraw(self, decision_id: int, reviewer: str, note: str | None = None) -> Decision:
        if not reviewer.strip():
            raise DecisionError("reviewer is required")
        if not 0 < decision_id <= MAX_ID:  # SQLite's INTEGER is 64-bit signed
            raise DecisionMissing(f"no decision {decision_id}")
        at = utc_stamp()
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            row = conn.execute(f"SELECT {_COLUMNS} FROM decisions WHERE id = ?", (decision_id,)).fetchone()
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
            row = conn.execute(f"SELECT {_COLUMNS} FROM decisions WHERE id = ?", (decision_id,)).fetchone()
        return _decision(row)

    def entries(self, include_withdrawn: bool = False) -> list[Decision]:
        if not self.path.exists():
            return []
        where = "" if include_withdrawn else " WHERE withdrawn_at IS NULL"
        with self._connect() as conn:
            rows = conn.execute(f"SELECT {_COLUMNS} FROM decisions{where} ORDER BY id").fetchall()
        return [_decision(r) for r in rows]

    def audit(self) -> list[dict[str, Any]]:
        if not self.path.exists():
            return []
        with self._connect() as conn:
            rows = conn.execute("SELECT id, decision_id, event, reviewer, note, at FROM audit ORDER BY id").fetchall()
        return [dict(r) for r in rows]

    def stamp(self) -> int:
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
            rows = conn.execute(f"SELECT {_COLUMNS} FROM decisions WHERE withdrawn_at IS NULL ORDER BY id").fetchall()
            conn.execute("COMMIT")
        return DecisionSet.from_decisions(stamp, [_decision(r) for r in rows])


def _decision(row: sqlite3.Row) -> Decision:
    return Decision(*(row[c.strip()] for c in _COLUMNS.split(",")))
