"""The ASGI types the service's own middleware and its fast responses are written against, and the one
way a JSON body is framed outside the framework (with the headers the framework's Response sends)."""

from __future__ import annotations

from collections.abc import Awaitable, Callable, MutableMapping
from typing import Any

__all__ = ["Scope", "Message", "Receive", "Send", "ASGIApp", "send_json"]

Scope = MutableMapping[str, Any]
Message = MutableMapping[str, Any]
Receive = Callable[[], Awaitable[Message]]
Send = Callable[[Message], Awaitable[None]]
ASGIApp = Callable[[Scope, Receive, Send], Awaitable[None]]


async def send_json(send: Send, body: bytes, status: int = 200) -> None:
    """A JSON response: the two messages, and the headers, that the framework's Response sends."""
    headers = [(b"content-length", str(len(body)).encode()), (b"content-type", b"application/json")]
    await send({"type": "http.response.start", "status": status, "headers": headers})
    await send({"type": "http.response.body", "body": body})
