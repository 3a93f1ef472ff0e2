"""A request body over the limit is refused with 413 before any handler reads it."""

from __future__ import annotations

from service.asgi import ASGIApp, Message, Receive, Scope, Send
from service.errors import error_response

__all__ = ["BodyLimit"]

_WITH_BODY = ("POST", "PUT", "PATCH", "DELETE")


class BodyLimit:
    """Reads a body once, checks it against `limit` bytes (or the path's own limit in `by_path`), and
    replays it to the app (an ASGI body is taken once). Parameters: the app; `limit`; `by_path`."""

    def __init__(self, app: ASGIApp, limit: int, by_path: dict[str, int] | None = None) -> None:
        self.app, self.limit, self.by_path = app, limit, dict(by_path or {})

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http" or scope["method"] not in _WITH_BODY:
            await self.app(scope, receive, send)
            return
        limit = self.by_path.get(scope["path"], self.limit)
        body = await _read_limited(receive, limit)
        if body is None:
            response = error_response(413, "body_too_large", f"the body is over {limit} bytes")
            await response(scope, receive, send)
            return
        await self.app(scope, _replay(body), send)


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
