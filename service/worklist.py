"""The serving bundle's worklist, built once per bundle, bundle before, query log and applied decisions,
and kept: the page and `/v1/worklist` read the same list. A `looked` mark changes no expansion, so
it does not rebuild the list; the marks are read again on every call (a cheap pass)."""

from __future__ import annotations

import threading
from dataclasses import dataclass
from typing import TYPE_CHECKING

from widen.decisions.decision import APPLIED, Decision
from widen.errors import DecisionsUnavailable
from widen.worklist.build import Bundle, build_worklist
from widen.worklist.coded import CodedCheck
from widen.worklist.items import Worklist
from widen.worklist.querylog import read_query_log

if TYPE_CHECKING:
    from service.state import ServiceState

__all__ = ["WorklistKeeper", "WorklistUnavailable"]


@dataclass
class WorklistUnavailable(Exception):
    """Why there is no worklist: `status` 409 (no query log configured) or 503 (no bundle serving)."""

    status: int
    code: str
    message: str


class WorklistKeeper:
    """The worklist of a service state, rebuilt when what it depends on changes."""

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._key: tuple[object, ...] | None = None
        self._list: Worklist | None = None

    def current(self, state: ServiceState) -> Worklist:
        settings = state.settings
        if settings.query_log is None:
            raise WorklistUnavailable(409, "no_query_log", "no query log is configured (WIDEN_QUERY_LOG)")
        serving = state.serving
        if serving is None:
            raise WorklistUnavailable(503, "not_ready", state.not_ready_reason)
        try:
            active = state.decision_store.entries()
        except DecisionsUnavailable:
            active = []
        if not settings.query_log.is_file():
            raise WorklistUnavailable(409, "no_query_log", f"the query log {settings.query_log} is not there")
        against = state.store.rollback_target()
        applied = tuple(sorted(d.id for d in active if d.action in APPLIED))
        key = (serving.version, against, settings.query_log.stat().st_mtime_ns, applied)
        with self._lock:
            if key != self._key or self._list is None:
                self._list = self._build(state, against, active)
                self._key = key
            _remark(self._list, active)
            return self._list

    def _build(self, state: ServiceState, against: str | None, active: list[Decision]) -> Worklist:
        serving = state.serving
        assert serving is not None and state.settings.query_log is not None
        now = Bundle(serving.lexicon, serving.cache)
        before = None
        if against and against != serving.version:
            other = state.serving_of(against)
            before = Bundle(other.lexicon, other.cache)
        coded_file = state.settings.coded_titles
        lines = coded_file.read_text(encoding="utf-8").splitlines() if coded_file else []
        coded = CodedCheck(line for line in lines if not line.startswith("#"))
        log = read_query_log(state.settings.query_log, state.settings.query_log_days)
        index = state.preview_index()
        return build_worklist(now, before, active, log, serving.options, index=index, coded=coded)


def _remark(listed: Worklist, active: list[Decision]) -> None:
    """The `looked` marks for the list's bundle, as the decisions now say."""
    marks = {d.phrase: d for d in active if d.action == "looked" and d.neighbour == listed.version}
    for item in listed.items:
        mark = marks.get(item.phrase)
        item.looked_by, item.looked_at = (mark.reviewer, mark.created_at) if mark else (None, None)
