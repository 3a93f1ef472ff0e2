"""Prometheus metrics of one app, in its own registry."""

from __future__ import annotations

from prometheus_client import CollectorRegistry, Counter, Gauge, Histogram, Info

__all__ = ["Telemetry"]


class Telemetry:
    """The counters, histogram and gauges `/metrics` exposes; `event` records bundle loads and refusals."""

    def __init__(self) -> None:
        self.registry = CollectorRegistry()
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
        self.model = Info("widen_model", "the serving bundle", registry=self.registry)
        self.reloads = Counter("widen_reloads", "bundles loaded", registry=self.registry)
        self.refused = Counter("widen_reloads_refused", "bundles refused (failed verification)", registry=self.registry)
        self.ready = Gauge("widen_ready", "1 while a verified bundle serves", registry=self.registry)

    def event(self, kind: str, version: str) -> None:
        """A bundle was `loaded` (now serving) or `refused` (failed verification)."""
        if kind == "loaded":
            self.reloads.inc()
            self.serving(version)
        elif kind == "refused":
            self.refused.inc()

    def serving(self, version: str) -> None:
        """Say which bundle serves (the model info and the ready gauge), without counting a load."""
        self.model.info({"version": version})
        self.ready.set(1)
