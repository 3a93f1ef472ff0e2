"""The edge of the service: plain ASGI middleware around the whole app (see `Edge`)."""

from __future__ import annotations

import json
import logging
import os
import time
from collections.abc import Awaitable, Callable, MutableMapping
from typing import Any
from urllib.parse import parse_qsl

from service.cache import ResultCache
from service.errors import ApiError, error_response
from service.routes.expansion import expand_one
from service.state import ServiceState
from service.wire import RequestOptions
from widen.clock import utc_stamp

__all__ = ["Edge", "route_label", "ROUTES"]

Scope = MutableMapping[str, Any]
Message = MutableMapping[str, Any]
Receive = Callable[[], Awaitable[Message]]
Send = Callable[[Message], Awaitable[None]]
ASGIApp = Callable[[Scope, Receive, Send], Awaitable[None]]

access_log = logging.getLogger("widen.access")

#: A GET of /v1/expand with nothing but `q` asks for the served options as they are.
_AS_SERVED = RequestOptions.model_construct(
    max=None, min_similarity=None, explain=False, original_boost=None, operator=None, places=None, match=None
)

ROUTES = (
    "/v1/expand",
    "/v1/expand/batch",
    "/v1/model",
    "/healthz",
    "/readyz",
    "/metrics",
    "/v1/admin/reload",
    "/v1/decisions",
    "/v1/decisions/export",
    "/v1/decisions/import",
)


def route_label(path: str) -> str:
    """The metrics label of a path: a known route, a family of routes, or other (bounded cardinality)."""
    if path in ROUTES:
        return path
    if path.startswith("/v1/decisions/"):
        return "/v1/decisions/{id}"
    if path == "/debug" or path.startswith("/debug/"):
        return "/debug"
    if path == "/demo" or path.startswith("/demo/"):
        return "/demo"
    return "other"


class Edge:
    """Outermost middleware: request ids, the body limit, the access log, metrics, and the
    response cache. Parameters: the app and the service state.

    Plain ASGI, not a framework middleware, because it runs on every request and must stay cheap:
    a GET of /v1/expand whose exact query string was answered before, for the same bundle and
    decisions, is answered here from the cache without entering the framework; one that asks
    with `q` alone (what a search front end sends) and is new is expanded here too, by the same
    function the route calls, so its bytes are the route's. Anything else, and any error, goes to
    the framework, the one place that writes error bodies. A POST body is read once, checked
    against the limit, and replayed to the app (an ASGI body is taken once).
    """

    def __init__(self, app: ASGIApp, state: ServiceState) -> None:
        self.app, self.state = app, state
        self.settings, self.telemetry, self.cache = state.settings, state.telemetry, state.cache
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

    def _get_key(self, scope: Scope) -> tuple[object, ...] | None:
        if scope["method"] != "GET" or scope.get("path") != "/v1/expand" or self.cache.size <= 0:
            return None
        if any(name == b"origin" for name, _ in scope.get("headers", [])):
            return None  # browser calls go through the CORS layer, which this shortcut would skip
        serving = self.state.serving
        if serving is None:
            return None
        return ("GET", serving.version, self.state.decisions.version, scope.get("query_string", b""))

    def _plain_query(self, scope: Scope) -> str | None:
        """The `q` of a GET /v1/expand that asks nothing else and that the route would take; else None."""
        if scope["method"] != "GET" or scope.get("path") != "/v1/expand":
            return None
        if any(name == b"origin" for name, _ in scope.get("headers", [])):
            return None  # browser calls go through the CORS layer
        # As the framework reads a query string (Starlette's QueryParams: latin-1, then parse_qsl).
        pairs = parse_qsl(scope.get("query_string", b"").decode("latin-1"), keep_blank_values=True)
        if len(pairs) != 1 or pairs[0][0] != "q" or not 1 <= len(pairs[0][1]) <= 256:
            return None
        return str(pairs[0][1])

    def _expanded(self, query: str) -> bytes | None:
        try:
            return expand_one(self.state, query, _AS_SERVED, "q").model_dump_json().encode()
        except ApiError:
            return None  # the route answers it again and writes the error body

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        started = time.perf_counter()
        request_id = _request_id(scope)
        status = {"code": 500}

        async def with_id(message: Message) -> None:
            if message["type"] == "http.response.start":
                status["code"] = message["status"]
                message.setdefault("headers", [])
                message["headers"] = [*message["headers"], (b"x-request-id", request_id.encode())]
            await send(message)

        send_with_id: Send = with_id
        try:
            key = self._get_key(scope)
            if key is not None:
                found = self.cache.get(key)
                if found is not None:
                    self.telemetry.cache_hits.inc()
                    await _send_json(send_with_id, found)
                    return
                self.telemetry.cache_misses.inc()
                scope["widen.edge_caches"] = True  # the handler need not cache this response again
                send_with_id = _keep_body(send_with_id, self.cache, key)
            query = self._plain_query(scope)
            if query is not None:
                body = self._expanded(query)
                if body is not None:  # kept by _keep_body when the cache is on
                    await _send_json(send_with_id, body)
                    return
            if scope["method"] in ("POST", "PUT", "PATCH", "DELETE"):
                body = await _read_limited(receive, self.settings.max_body_bytes)
                if body is None:
                    response = error_response(
                        413, "body_too_large", f"the body is over {self.settings.max_body_bytes} bytes"
                    )
                    await response(scope, receive, send_with_id)
                    return
                receive = _replay(body)
            await self.app(scope, receive, send_with_id)
        finally:
            path = scope.get("path", "")
            route = route_label(path)
            seconds = time.perf_counter() - started
            self._counter(route, status["code"]).inc()
            self._timer(route).observe(seconds)
            if self.settings.access_log:
                access_log.info(
                    json.dumps(
                        {
                            "at": utc_stamp(),
                            "request_id": request_id,
                            "method": scope.get("method"),
                            "path": path,
                            "status": status["code"],
                            "ms": round(seconds * 1000, 3),
                        }
                    )
                )


def _keep_body(send: Send, cache: ResultCache[bytes], key: tuple[object, ...]) -> Send:
    """Pass a response on, and cache its body when it is a complete 200."""
    state: dict[str, Any] = {"ok": False, "chunks": []}

    async def send_and_keep(message: Message) -> None:
        if message["type"] == "http.response.start":
            state["ok"] = message["status"] == 200
        elif message["type"] == "http.response.body" and state["ok"]:
            state["chunks"].append(message.get("body", b""))
            if not message.get("more_body"):
                cache.put(key, b"".join(state["chunks"]))
        await send(message)

    return send_and_keep


async def _send_json(send: Send, body: bytes) -> None:
    """A 200 with a JSON body: the two messages, and headers, that Starlette's Response sends."""
    headers = [(b"content-length", str(len(body)).encode()), (b"content-type", b"application/json")]
    await send({"type": "http.response.start", "status": 200, "headers": headers})
    await send({"type": "http.response.body", "body": body})


def _request_id(scope: Scope) -> str:
    for name, value in scope.get("headers", []):
        if name == b"x-request-id":
            text = str(value.decode("latin-1"))
            if 0 < len(text) <= 128 and text.isascii() and text.isprintable():
                return text
            break
    return os.urandom(16).hex()  # 128 random bits, as a UUID4 has 122


async def _read_limited(receive: Receive, limit: int) -> bytes | None:
    chunks, size = [], 0
    while True:
        message = await receive()
        if message["type"] == "http.disconnect":
            break
        chunk = message.get("body", b"")
        size += len(chunk)
        if size > limit:
            return None
        chunks.append(chunk)
        if not message.get("more_body"):
            break
    return b"".join(chunks)


def _replay(body: bytes) -> Receive:
    sent = False

    async def receive() -> Message:
        nonlocal sent
        if not sent:
            sent = True
            return {"type": "http.request", "body": body, "more_body": False}
        return {"type": "http.disconnect"}

    return receive
