"""Reviewer decisions in PostgreSQL, for replicas of the service on several hosts.

One database shared by every replica (`WIDEN_DECISIONS_URL=postgresql://...`), through a small
connection pool (psycopg 3 and psycopg_pool). widen creates and migrates its own schema: numbered
steps, forward only, applied once under a transaction-level advisory lock, so replicas starting
together do not race; `widen decisions --migrate` runs them by hand. Each change sends a
NOTIFY on the channel `widen_decisions` in its own transaction, so listening replicas take a new
snapshot at once (`listen`); polling the stamp stays the fallback.

A decision is written once: an active decision with the same phrase, neighbour, action and weight
is unique (a partial unique index), so two replicas recording the same block at the same moment
get the one decision back. Connection strings are shown with their password masked
(`masked_url`), in logs, errors and pages alike.
"""

from __future__ import annotations

import logging
import re
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any

from widen.clock import utc_stamp
from widen.decisions.backend import Checked, DecisionStore
from widen.decisions.decision import MAX_ID, Decision, DecisionSet
from widen.errors import DecisionError, DecisionMissing, DecisionsUnavailable, DecisionWithdrawn

__all__ = ["PostgresDecisionStore", "MIGRATIONS", "masked_url", "CHANNEL"]

log = logging.getLogger(__name__)

CHANNEL = "widen_decisions"
#: An arbitrary constant: the advisory lock widen's migrations are applied under.
_MIGRATION_LOCK = 0x77696465  # "wide"
_COLUMNS = "id, phrase, neighbour, action, weight, reviewer, note, created_at, withdrawn_at, withdrawn_by"

#: The schema, step by step: each step runs once, in order, in the migrating transaction.
MIGRATIONS: tuple[str, ...] = (
    """
    CREATE TABLE widen_decisions (
        id BIGSERIAL PRIMARY KEY,
        phrase TEXT NOT NULL,
        neighbour TEXT,
        action TEXT NOT NULL CHECK (action IN ('block', 'pin', 'exempt')),
        weight DOUBLE PRECISION,
        reviewer TEXT NOT NULL,
        note TEXT,
        created_at TEXT NOT NULL,
        withdrawn_at TEXT,
        withdrawn_by TEXT
    );
    CREATE TABLE widen_audit (
        id BIGSERIAL PRIMARY KEY,
        decision_id BIGINT NOT NULL REFERENCES widen_decisions (id),
        event TEXT NOT NULL,
        reviewer TEXT NOT NULL,
        note TEXT,
        at TEXT NOT NULL
    );
    CREATE INDEX widen_decisions_phrase ON widen_decisions (phrase);
    """,
    """
    CREATE UNIQUE INDEX widen_decisions_once ON widen_decisions
        (phrase, COALESCE(neighbour, ''), action, COALESCE(weight, -1)) WHERE withdrawn_at IS NULL;
    """,
    # A worklist item looked at in a bundle (`looked`, the neighbour column holding the bundle's version).
    """
    ALTER TABLE widen_decisions DROP CONSTRAINT widen_decisions_action_check;
    ALTER TABLE widen_decisions ADD CONSTRAINT widen_decisions_action_check
        CHECK (action IN ('block', 'pin', 'exempt', 'looked'));
    """,
)


def masked_url(url: str) -> str:
    """The connection string with any password replaced by ***, in URL or key=value form."""
    masked = re.sub(r"(://[^:/@]*:)[^@]*@", r"\1***@", url)
    return re.sub(r"(password\s*=\s*)('[^']*'|\S+)", r"\1***", masked, flags=re.IGNORECASE)


class PostgresDecisionStore(DecisionStore):
    """The decisions in a PostgreSQL database. Parameters: `url`, a postgresql:// connection string;
    `timeout`, seconds to wait for a connection before DecisionsUnavailable."""

    def __init__(self, url: str, timeout: float = 2.0) -> None:
        from psycopg_pool import ConnectionPool

        self.url = url
        self.timeout = timeout
        self._pool = ConnectionPool(
            url,
            min_size=0,
            max_size=4,
            timeout=timeout,
            kwargs={"connect_timeout": max(1, int(timeout))},
            open=False,
            name="widen-decisions",
        )
        self._opened = False
        self._migrated = False
        self._lock = threading.Lock()

    def __repr__(self) -> str:
        return f"PostgresDecisionStore({masked_url(self.url)!r})"

    def close(self) -> None:
        if self._opened:
            self._pool.close()

    @contextmanager
    def _connect(self) -> Iterator[Any]:
        """A pooled connection inside a transaction; DecisionsUnavailable when the database cannot be reached."""
        import psycopg
        import psycopg_pool

        with self._lock:
            if not self._opened:
                self._pool.open(wait=False)
                self._opened = True
        try:
            with self._pool.connection() as conn:
                if not self._migrated:
                    self._apply(conn)
                with conn.transaction():
                    yield conn
        except (psycopg.OperationalError, psycopg_pool.PoolTimeout) as exc:
            raise DecisionsUnavailable(
                f"the decisions database {masked_url(self.url)} cannot be reached: {type(exc).__name__}"
            ) from None

    def _apply(self, conn: Any) -> None:
        with conn.transaction():
            conn.execute("SELECT pg_advisory_xact_lock(%s)", (_MIGRATION_LOCK,))
            conn.execute("CREATE TABLE IF NOT EXISTS widen_schema (version INTEGER NOT NULL)")
            row = conn.execute("SELECT version FROM widen_schema").fetchone()
            version = 0 if row is None else int(row[0])
            for step, sql in enumerate(MIGRATIONS[version:], start=version + 1):
                conn.execute(sql)
                log.info("decisions database migrated to version %d", step)
            if row is None:
                conn.execute("INSERT INTO widen_schema (version) VALUES (%s)", (len(MIGRATIONS),))
            elif version < len(MIGRATIONS):
                conn.execute("UPDATE widen_schema SET version = %s", (len(MIGRATIONS),))
        self._migrated = True

    def migrate(self) -> int:
        """Apply any migration not yet applied; returns the schema version."""
        with self._connect() as conn:
            return int(conn.execute("SELECT version FROM widen_schema").fetchone()[0])

    def _insert(self, rows: list[Checked]) -> list[Decision]:
        made = []
        with self._connect() as conn:
            for (phrase, neighbour, reviewer), action, weight, note in rows:
                created = utc_stamp()
                row = conn.execute(
                    "INSERT INTO widen_decisions (phrase, neighbour, action, weight, reviewer, note, created_at)"
                    " VALUES (%s, %s, %s, %s, %s, %s, %s)"
                    " ON CONFLICT (phrase, COALESCE(neighbour, ''), action, COALESCE(weight, -1))"
                    " WHERE withdrawn_at IS NULL DO NOTHING"
                    f" RETURNING {_COLUMNS}",
                    (phrase, neighbour, action, weight, reviewer, note, created),
                ).fetchone()
                if row is None:  # already in force: the one decision, as it was recorded
                    row = conn.execute(
                        f"SELECT {_COLUMNS} FROM widen_decisions WHERE phrase = %s"
                        " AND COALESCE(neighbour, '') = COALESCE(%s, '') AND action = %s"
                        " AND COALESCE(weight, -1) = COALESCE(%s, -1) AND withdrawn_at IS NULL",
                        (phrase, neighbour, action, weight),
                    ).fetchone()
                else:
                    conn.execute(
                        "INSERT INTO widen_audit (decision_id, event, reviewer, note, at)"
                        " VALUES (%s, 'made', %s, %s, %s)",
                        (row[0], reviewer, note, created),
                    )
                made.append(Decision(*row))
            conn.execute(f"NOTIFY {CHANNEL}")
        return made

    def _restore(self, decisions: list[Decision], audit: list[dict[str, Any]]) -> int:
        import psycopg

        try:
            with self._connect() as conn:
                conn.execute("LOCK TABLE widen_decisions IN EXCLUSIVE MODE")
                if conn.execute("SELECT 1 FROM widen_decisions LIMIT 1").fetchone() is not None:
                    raise DecisionError("a history can only be imported into an empty decisions database")
                new_ids = {}
                for d in decisions:
                    row = conn.execute(
                        "INSERT INTO widen_decisions (phrase, neighbour, action, weight, reviewer, note, created_at,"
                        " withdrawn_at, withdrawn_by) VALUES (%s, %s, %s, %s, %s, %s, %s, %s, %s) RETURNING id",
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
                    ).fetchone()
                    new_ids[d.id] = int(row[0])
                for e in audit:
                    conn.execute(
                        "INSERT INTO widen_audit (decision_id, event, reviewer, note, at) VALUES (%s, %s, %s, %s, %s)",
                        (new_ids[e["decision_id"]], e["event"], e["reviewer"], e.get("note"), e["at"]),
                    )
                conn.execute(f"NOTIFY {CHANNEL}")
        except psycopg.errors.UniqueViolation:
            raise DecisionError("the history holds the same decision in force twice") from None
        return len(decisions)

    def withdraw(self, decision_id: int, reviewer: str, note: str | None = None) -> Decision:
        if not reviewer.strip():
            raise DecisionError("reviewer is required")
        if not 0 < decision_id <= MAX_ID:
            raise DecisionMissing(f"no decision {decision_id}")
        at = utc_stamp()
        with self._connect() as conn:
            row = conn.execute(
                f"SELECT {_COLUMNS} FROM widen_decisions WHERE id = %s FOR UPDATE", (decision_id,)
            ).fetchone()
            if row is None:
                raise DecisionMissing(f"no decision {decision_id}")
            if row[8] is not None:
                raise DecisionWithdrawn(f"decision {decision_id} was already withdrawn")
            row = conn.execute(
                f"UPDATE widen_decisions SET withdrawn_at = %s, withdrawn_by = %s WHERE id = %s RETURNING {_COLUMNS}",
                (at, reviewer.strip(), decision_id),
            ).fetchone()
            conn.execute(
                "INSERT INTO widen_audit (decision_id, event, reviewer, note, at) VALUES (%s, 'withdrawn', %s, %s, %s)",
                (decision_id, reviewer.strip(), note, at),
            )
            conn.execute(f"NOTIFY {CHANNEL}")
        return Decision(*row)

    def entries(self, include_withdrawn: bool = False) -> list[Decision]:
        where = "" if include_withdrawn else " WHERE withdrawn_at IS NULL"
        with self._connect() as conn:
            rows = conn.execute(f"SELECT {_COLUMNS} FROM widen_decisions{where} ORDER BY id").fetchall()
        return [Decision(*r) for r in rows]

    def audit(self) -> list[dict[str, Any]]:
        with self._connect() as conn:
            rows = conn.execute("SELECT id, decision_id, event, reviewer, note, at FROM widen_audit ORDER BY id")
            names = ("id", "decision_id", "event", "reviewer", "note", "at")
            return [dict(zip(names, r, strict=True)) for r in rows.fetchall()]

    def stamp(self) -> int:
        with self._connect() as conn:
            return int(conn.execute("SELECT COALESCE(MAX(id), 0) FROM widen_audit").fetchone()[0])

    def snapshot(self) -> DecisionSet:
        with self._connect() as conn:
            conn.execute("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ")
            stamp = int(conn.execute("SELECT COALESCE(MAX(id), 0) FROM widen_audit").fetchone()[0])
            rows = conn.execute(
                f"SELECT {_COLUMNS} FROM widen_decisions WHERE withdrawn_at IS NULL ORDER BY id"
            ).fetchall()
        return DecisionSet.from_decisions(stamp, [Decision(*r) for r in rows])

    def listen(self, wake: Callable[[], object], stop: threading.Event, retry_seconds: float = 1.0) -> None:
        """Call `wake` whenever any process changes the decisions, until `stop` is set; also once after
        each (re)connection and each lost connection. Runs in its own thread on its own connection;
        while the database is away it retries every `retry_seconds`."""
        import psycopg

        while not stop.is_set():
            try:
                with psycopg.connect(self.url, autocommit=True, connect_timeout=max(1, int(self.timeout))) as conn:
                    conn.execute(f"LISTEN {CHANNEL}")
                    wake()  # whatever changed while nobody was listening
                    while not stop.is_set():
                        for _ in conn.notifies(timeout=0.5, stop_after=1):
                            wake()
            except psycopg.Error as exc:
                log.warning("decisions listener: %s; polling meanwhile", type(exc).__name__)
                wake()  # lets the caller find out the database is away (and say its decisions are stale)
                stop.wait(retry_seconds)
