"""GET /v1/expand answered before the framework's routing, by the route's own reader and responder.

A search front end sends GETs, and the framework's routing, dependency injection and response
objects cost more than expanding a query that is already prepared. This middleware calls the same
`read_query_string` and `answer` as the route (`service.routes.expansion`), so its bytes are the
route's, errors included. A browser's call (an `Origin` header) goes through the framework, where
the CORS layer is.
"""

from __future__ import annotations

from typing import Any

from service.asgi import ASGIApp, Receive, Scope, Send, send_json
from service.errors import ApiError, error_response
from service.routes.expansion import answer, read_query_string
from service.state import ServiceState

__all__ = ["ExpandShortcut", "PATH"]

PATH = "/v1/expand"


class ExpandShortcut:
    """Parameters: the app; the service state; `route`, the framework's GET route of `PATH` (named in the
    metrics of the requests answered here)."""

    def __init__(self, app: ASGIApp, state: ServiceState, route: Any) -> None:
        self.app, self.state, self.route = app, state, route

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if (
            scope["type"] != "http"
            or scope["method"] != "GET"
            or scope.get("path") != PATH
            or any(name == b"origin" for name, _ in scope.get("headers", []))
        ):
            await self.app(scope, receive, send)
            return
        scope["route"] = self.route
        try:
            body = answer(self.state, read_query_string(scope.get("query_string", b"")))
        except ApiError as exc:
            await error_response(exc.status, exc.code, exc.message, exc.field)(scope, receive, send)
            return
        await send_json(send, body)
