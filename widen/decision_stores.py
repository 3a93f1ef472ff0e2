"""Which decisions database a store uses: the one function that picks a `DecisionStore` backend."""

from __future__ import annotations

from widen.decisions import DecisionStore
from widen.sqlite_decisions import SqliteDecisionStore
from widen.store import Store

__all__ = ["open_decision_store"]


def open_decision_store(store: Store) -> DecisionStore:
    """The decisions of `store`: SQLite in the store folder (the embedded default)."""
    return SqliteDecisionStore(store.decisions_path)
