"""Prometheus metrics of one app, in its own registry, or for all workers of a server at once.

With several workers (`widen serve --workers N`, under gunicorn) the launcher sets
`PROMETHEUS_MULTIPROC_DIR` before anything is loaded, and prometheus-client's multiprocess mode
keeps every worker's values in files there; a scrape of any worker then reports the whole
server: counters and histograms summed over the workers (the dead ones' counts kept), and the
gauges aggregated as each says (`widen_ready`: the lowest of the live workers, so 1 only when
every worker serves; `widen_model_info`: per live worker, summed, so a version with value 2 is
served by two workers while a swap is under way).
"""

from __future__ import annotations

import os

from prometheus_client import CollectorRegistry, Counter, Gauge, Histogram, generate_latest
from prometheus_client.multiprocess import MultiProcessCollector

__all__ = ["Telemetry", "MULTIPROCESS"]

#: The environment variable prometheus-client's multiprocess mode reads.
MULTIPROCESS = "PROMETHEUS_MULTIPROC_DIR"


class Telemetry:
    """The counters, histogram and gauges `/metrics` exposes; `event` records bundle loads and refusals."""

    def __init__(self) -> None:
        self.registry = CollectorRegistry()
        self.shared = bool(os.environ.get(MULTIPROCESS))
        self.requests = Counter(
            "widen_requests", "HTTP requests by route and status", ["route", "status"], registry=self.registry
        )
        self.latency = Histogram(
            "widen_request_seconds",
            "HTTP request latency by route",
            ["route"],
            buckets=(0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 1.0),
            registry=self.registry,
        )
        self.cache_hits = Counter("widen_cache_hits", "expansion cache hits", registry=self.registry)
        self.cache_misses = Counter("widen_cache_misses", "expansion cache misses", registry=self.registry)
        # A gauge with the version as its label: what an Info metric exposes, and multiprocess mode
        # (which has no Info) can aggregate.
        self.model = Gauge(
            "widen_model_info", "the serving bundle", ["version"], registry=self.registry, multiprocess_mode="livesum"
        )
        self.reloads = Counter("widen_reloads", "bundles loaded", registry=self.registry)
        self.refused = Counter("widen_reloads_refused", "bundles refused (failed verification)", registry=self.registry)
        self.store_failures = Counter(
            "widen_store_sync_failures", "failed tries to mirror a store given by URL", registry=self.registry
        )
        self.ready = Gauge(
            "widen_ready", "1 while a verified bundle serves", registry=self.registry, multiprocess_mode="livemin"
        )
        self._version: str | None = None

    def event(self, kind: str, version: str) -> None:
        """A bundle was `loaded` (now serving) or `refused` (failed verification)."""
        if kind == "loaded":
            self.reloads.inc()
            self.serving(version)
        elif kind == "refused":
            self.refused.inc()

    def serving(self, version: str) -> None:
        """Say which bundle serves (the model info and the ready gauge), without counting a load."""
        if self._version is not None and self._version != version:
            if self.shared:  # a worker's series lives in its file: it can only go to 0
                self.model.labels(self._version).set(0)
            else:  # one series, as an Info metric would show: the old version's goes away
                self.model.remove(self._version)
        self.model.labels(version).set(1)
        self._version = version
        self.ready.set(1)

    def exposition(self) -> bytes:
        """The Prometheus text of this process, or, in multiprocess mode, of every worker of the server."""
        if not self.shared:
            return bytes(generate_latest(self.registry))
        everyone = CollectorRegistry()
        MultiProcessCollector(everyone)  # type: ignore[no-untyped-call]
        return bytes(generate_latest(everyone))
