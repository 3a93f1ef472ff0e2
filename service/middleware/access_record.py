"""Every request counted and timed by route and status, and one JSON access-log line for it."""

from __future__ import annotations

import json
import logging
import time
from typing import Any

from service.asgi import ASGIApp, Message, Receive, Scope, Send
from service.middleware.request_id import REQUEST_ID
from service.telemetry import Telemetry
from widen.clock import utc_stamp

__all__ = ["AccessRecord", "route_label", "access_log"]

access_log = logging.getLogger("widen.access")


def route_label(scope: Scope) -> str:
    """The metrics label of a request: the path template of the route that answered it (the app's own
    routes, so the label's values are bounded), or `other`."""
    route = scope.get("route")
    path = getattr(route, "path", None)
    return path if isinstance(path, str) else "other"


class AccessRecord:
    """Parameters: the app; `telemetry`, where requests are counted; `log`, write the access log."""

    def __init__(self, app: ASGIApp, telemetry: Telemetry, log: bool = True) -> None:
        self.app, self.telemetry, self.log = app, telemetry, log
        # Each route's metric series, found once: `labels()` takes a lock and builds a key every call.
        self._counters: dict[tuple[str, int], Any] = {}
        self._timers: dict[str, Any] = {}

    def _counter(self, route: str, code: int) -> Any:
        found = self._counters.get((route, code))
        if found is None:  # routes and status codes are few: the dict stays small
            found = self._counters[route, code] = self.telemetry.requests.labels(route, str(code))
        return found

    def _timer(self, route: str) -> Any:
        found = self._timers.get(route)
        if found is None:
            found = self._timers[route] = self.telemetry.latency.labels(route)
        return found

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        started = time.perf_counter()
        status = 500

        async def noting_status(message: Message) -> None:
            nonlocal status
            if message["type"] == "http.response.start":
                status = message["status"]
            await send(message)

        try:
            await self.app(scope, receive, noting_status)
        finally:
            seconds = time.perf_counter() - started
            route = route_label(scope)
            self._counter(route, status).inc()
            self._timer(route).observe(seconds)
            if self.log:
                line = {
                    "at": utc_stamp(),
                    "request_id": scope.get(REQUEST_ID),
                    "method": scope.get("method"),
                    "path": scope.get("path", ""),
                    "status": status,
                    "ms": round(seconds * 1000, 3),
                }
                access_log.info(json.dumps(line))
