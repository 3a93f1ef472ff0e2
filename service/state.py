"""The service's one state object: the store, the decisions, the serving bundle and its options.

Every router reaches it as `request.app.state.widen`. A request takes the current `Serving`
once and uses it to the end, so a swap (one attribute assignment) never changes a bundle under
a request in flight. A watcher thread checks the store's CURRENT pointer and the decisions; a
new bundle is verified against its manifest before it serves, and a bad one is refused, logged
and counted while the old one keeps serving.
"""

from __future__ import annotations

import gc
import logging
import threading
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

from service.cache import ResultCache
from service.settings import Settings
from service.telemetry import Telemetry
from service.worklist import WorklistKeeper
from widen.decisions.decision import DecisionSet
from widen.decisions.open_store import open_decision_store
from widen.errors import BundleError
from widen.evaluation.index import SearchIndex
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import prepare
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.model.remote_store import StoreMirror, is_url, mirror_folder
from widen.model.store import Store

__all__ = ["Serving", "ServiceState"]

log = logging.getLogger("widen.serve")


@contextmanager
def _collector_paused(pause: bool) -> Iterator[None]:
    """With `pause` (no request served yet: nothing else makes garbage meanwhile), the garbage collector
    off while a bundle is prepared; its hundreds of thousands of new objects would otherwise set off
    full collections, each walking all of them again."""
    was = gc.isenabled()
    if pause:
        gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def _out_of_collection() -> None:
    """Move every object made so far (the new bundle's prepared answers above all) out of the garbage
    collector's reach (`gc.freeze`), after one full collection. Otherwise each full collection, which a
    busy server runs every few seconds, walks them all: 150 ms on a 20,000-posting board of real titles,
    a stall for every request in flight. A replaced bundle is still let go: nothing it holds refers
    back to it, so reference counting frees it (`tests/test_server_process.py` checks it). The cost is
    one full collection a bundle, at start and at each swap."""
    gc.collect()
    gc.freeze()


@dataclass(frozen=True)
class Serving:
    """One verified bundle, what is kept of it between queries, and the options it is served with (its
    own, with the service's overrides)."""

    lexicon: Lexicon
    cache: ExpansionCache
    options: ExpansionOptions

    @property
    def version(self) -> str:
        return self.lexicon.version


class ServiceState:
    """Everything the routers share. Parameters: the service settings; `telemetry`, where events are counted."""

    def __init__(self, settings: Settings, telemetry: Telemetry | None = None) -> None:
        self.settings = settings
        #: For a store given by URL, what keeps the local mirror in step (None for a local store).
        self.mirror: StoreMirror | None = None
        if is_url(settings.store):
            self.mirror = StoreMirror(
                str(settings.store), mirror_folder(settings), timeout=settings.mirror_timeout_seconds
            )
            self.store = self.mirror.store
        else:
            self.store = Store(Path(settings.store))
        url = settings.decisions_url.get_secret_value() if settings.decisions_url else None
        self.decision_store = open_decision_store(self.store, url)
        #: Why the decisions in use may be out of date (the database cannot be reached), else None.
        self.decisions_stale: str | None = None
        self.telemetry = telemetry or Telemetry()
        # The service caches response bytes: a hit costs a dict lookup, no model and no JSON work.
        self.cache: ResultCache[bytes] = ResultCache(settings.cache_size)
        self.serving: Serving | None = None
        self.decisions = DecisionSet()
        self.not_ready_reason = "no bundle loaded yet"
        self.refused: set[str] = set()
        self.demo_index: SearchIndex | None = None
        if settings.demo_index is not None:
            self.demo_index = SearchIndex(settings.demo_index, self.store.search_indexes)
        self._decisions_stamp = -1
        self._others: dict[str, Serving] = {}
        self._built: dict[str, SearchIndex] = {}
        #: The serving bundle's worklist (`service.worklist`), built on first use.
        self.worklists = WorklistKeeper()
        self._lock = threading.Lock()
        self._decisions_lock = threading.Lock()
        self._stop = threading.Event()
        self._threads: list[threading.Thread] = []

    def served_options(self, lexicon: Lexicon) -> ExpansionOptions:
        """The bundle's own expansion options; the environment may override only max_tokens."""
        if self.settings.max_query_tokens is None:
            return lexicon.options
        return lexicon.options.model_copy(update={"max_tokens": self.settings.max_query_tokens})

    # -- the serving bundle ---------------------------------------------------------------

    def check(self) -> str:
        """Load CURRENT if it changed; returns what happened (unchanged, loaded, refused, none)."""
        with self._lock:
            if self.mirror is not None:
                synced = self.mirror.sync()
                if synced == "failed":
                    self.telemetry.store_failures.inc()
                    if self.serving is None:
                        self.not_ready_reason = f"the store could not be mirrored: {self.mirror.last_error}"
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
                lexicon = Lexicon(self.store.open_bundle(version, verify=True))
            except (BundleError, OSError, ValueError) as exc:
                self.refused.add(version)
                log.error("refused bundle %s: %s", version, exc)
                self.telemetry.event("refused", version)
                if self.serving is None:
                    self.not_ready_reason = f"bundle {version} failed verification: {exc}"
                return "refused"
            options = self.served_options(lexicon)
            cache = ExpansionCache(lexicon)
            first = self.serving is None
            with _collector_paused(first):
                if self.settings.prepare:  # before the swap: the bundle serving now keeps serving meanwhile
                    started = time.monotonic()
                    entries = prepare(lexicon, cache, options, self.settings.prepare_entries)
                    took = time.monotonic() - started
                    log.info("prepared %d entries and titles of %s in %.1f s", entries, version, took)
                self.serving = Serving(lexicon, cache, options)
                _out_of_collection()
            log.info("serving bundle %s", version)
            self.telemetry.event("loaded", version)
            return "loaded"

    def serving_of(self, version: str) -> Serving:
        """The serving bundle, or another bundle of the store opened (and verified) for comparison."""
        serving = self.serving
        if serving is not None and serving.version == version:
            return serving
        if version not in self._others:
            if len(self._others) >= 3:
                self._others.pop(next(iter(self._others)))
            lexicon = Lexicon(self.store.open_bundle(version, verify=True))
            self._others[version] = Serving(lexicon, ExpansionCache(lexicon), self.served_options(lexicon))
        return self._others[version]

    # -- decisions ------------------------------------------------------------------------

    def check_decisions(self) -> bool:
        """Take a new snapshot if any process changed the decisions; True when it did."""
        try:
            stamp = self.decision_store.stamp()
            if stamp == self._decisions_stamp:
                self.decisions_stale = None
                return False
            snapshot = self.decision_store.snapshot()
        except Exception as exc:  # a locked, damaged or unreachable database must not stop serving
            if self.decisions_stale is None:
                log.error("cannot read decisions, serving the last ones loaded: %s", exc)
            self.decisions_stale = (
                "the decisions database cannot be reached: serving the decisions last loaded"
                f" (stamp {max(self._decisions_stamp, 0)}) until it is back"
            )
            return False
        with self._decisions_lock:  # the poller and the listener may both have read one
            self.decisions = snapshot
            self._decisions_stamp = snapshot.version
        self.decisions_stale = None
        return True

    # -- the postings preview ---------------------------------------------------------------

    def preview_index(self) -> SearchIndex | None:
        """The demo index, else the newest index `widen evaluate` built in the store."""
        if self.demo_index is not None:
            return self.demo_index
        path = SearchIndex.newest_built(self.store.search_indexes)
        if path is None:
            return None
        if str(path) not in self._built:
            self._built.clear()
            self._built[str(path)] = SearchIndex.open_built(path)
        return self._built[str(path)]

    # -- the watcher ------------------------------------------------------------------------

    def start(self, watch: bool = True) -> None:
        """Load the bundle and decisions now; with `watch`, keep checking in background threads."""
        self.check()
        self.check_decisions()
        if not watch:
            return
        every = ((self.check, self.settings.poll_seconds), (self.check_decisions, self.settings.decisions_poll_seconds))
        for target, seconds in every:
            thread = threading.Thread(target=self._loop, args=(target, seconds), daemon=True, name="widen-watch")
            thread.start()
            self._threads.append(thread)
        listen = getattr(self.decision_store, "listen", None)
        if listen is not None:  # a shared database wakes every replica at once; polling stays the fallback
            thread = threading.Thread(
                target=listen, args=(self.check_decisions, self._stop), daemon=True, name="widen-listen"
            )
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
