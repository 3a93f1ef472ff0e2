"""Which decisions database a store uses: the one function that picks a `DecisionStore` backend."""

from __future__ import annotations

from widen.decisions.backend import DecisionStore
from widen.decisions.sqlite import SqliteDecisionStore
from widen.errors import BadInput
from widen.model.store import Store

__all__ = ["open_decision_store"]


def open_decision_store(store: Store, url: str | None = None) -> DecisionStore:
    """The decisions of `store`: SQLite in the store folder (the embedded default), or, with `url`
    a postgresql:// connection string, that PostgreSQL database (shared by replicas on several hosts)."""
    if not url:
        return SqliteDecisionStore(store.decisions_path)
    if url.startswith(("postgresql://", "postgres://")):
        from widen.decisions.postgres import PostgresDecisionStore

        return PostgresDecisionStore(url)
    raise BadInput("the decisions database must be a postgresql:// URL (or unset for the store's own SQLite)")
