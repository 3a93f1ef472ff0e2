"""Which bundle serves, and the swap to a new one without a failed request.

A request takes the current `Serving` once and uses it to the end, so a swap (one
attribute assignment) never changes a bundle under a request in flight. A watcher thread
checks the store's CURRENT pointer and the decisions; a new bundle is verified against its
manifest before it serves, and a bad one is refused, logged and counted while the old one
keeps serving.
"""

from __future__ import annotations

import logging
import threading
from collections.abc import Callable
from dataclasses import dataclass

from service.decisions import DecisionSet, DecisionStore
from service.expansion import Lexicon
from training.bundle import BundleError, Store, open_bundle

__all__ = ["Serving", "ModelHolder"]

log = logging.getLogger("widen.serve")


@dataclass(frozen=True)
class Serving:
    lexicon: Lexicon

    @property
    def version(self) -> str:
        return self.lexicon.version


class ModelHolder:
    """The serving bundle and decisions of one store, kept up to date by `check()` or a watcher."""

    def __init__(self, store: Store, on_event: Callable[[str, str], None] | None = None) -> None:
        self.store = store
        self.decisions_store = DecisionStore(store.decisions_path)
        self.serving: Serving | None = None
        self.decisions = DecisionSet()
        self.not_ready_reason = "no bundle loaded yet"
        self.refused: set[str] = set()
        self._decisions_stamp = -1
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._threads: list[threading.Thread] = []
        self.on_event = on_event or (lambda kind, detail: None)

    def check(self) -> str:
        """Load CURRENT if it changed; returns what happened (unchanged, loaded, refused, none)."""
        with self._lock:
            version = self.store.current_version()
            if version is None:
                if self.serving is None:
                    self.not_ready_reason = f"the store {self.store.root} has no current bundle"
                return "none"
            if self.serving is not None and version == self.serving.version:
                return "unchanged"
            if version in self.refused:
                return "refused"
            try:
                lexicon = Lexicon(open_bundle(self.store, version, verify=True))
            except (BundleError, OSError, ValueError) as exc:
                self.refused.add(version)
                log.error("refused bundle %s: %s", version, exc)
                self.on_event("refused", version)
                if self.serving is None:
                    self.not_ready_reason = f"bundle {version} failed verification: {exc}"
                return "refused"
            self.serving = Serving(lexicon)
            log.info("serving bundle %s", version)
            self.on_event("loaded", version)
            return "loaded"

    def check_decisions(self) -> bool:
        """Take a new snapshot if any process changed the decisions; True when it did."""
        try:
            stamp = self.decisions_store.stamp()
        except Exception as exc:  # a locked or damaged database must not stop serving
            log.error("cannot read decisions: %s", exc)
            return False
        if stamp == self._decisions_stamp:
            return False
        self.decisions = self.decisions_store.snapshot()
        self._decisions_stamp = stamp
        return True

    def start(self, poll_seconds: float, decisions_poll_seconds: float) -> None:
        self.check()
        self.check_decisions()
        for target, every in ((self.check, poll_seconds), (self.check_decisions, decisions_poll_seconds)):
            thread = threading.Thread(target=self._loop, args=(target, every), daemon=True, name="widen-watch")
            thread.start()
            self._threads.append(thread)

    def _loop(self, target: Callable[[], object], every: float) -> None:
        while not self._stop.wait(every):
            try:
                target()
            except Exception:  # keep watching whatever one check raised
                log.exception("watcher check failed")

    def stop(self) -> None:
        self._stop.set()
        for thread in self._threads:
            thread.join(timeout=5)
