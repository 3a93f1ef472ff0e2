"""Every request's id: the client's `X-Request-ID` when it is a sane one, else a new one; echoed back."""

from __future__ import annotations

import os

from service.asgi import ASGIApp, Message, Receive, Scope, Send

__all__ = ["RequestId", "REQUEST_ID"]

#: Where the id is kept in the request's scope, for the middleware and handlers inside.
REQUEST_ID = "widen.request_id"


def _request_id(scope: Scope) -> str:
    for name, value in scope.get("headers", []):
        if name == b"x-request-id":
            text = str(value.decode("latin-1"))
            if 0 < len(text) <= 128 and text.isascii() and text.isprintable():
                return text
            break
    return os.urandom(16).hex()  # 128 random bits, as a UUID4 has 122


class RequestId:
    """Keeps the request's id in the scope and adds it to the response's headers. Parameters: the app."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        request_id = scope[REQUEST_ID] = _request_id(scope)
        header = (b"x-request-id", request_id.encode())

        async def with_id(message: Message) -> None:
            if message["type"] == "http.response.start":
                message["headers"] = [*message.get("headers", []), header]
            await send(message)

        await self.app(scope, receive, with_id)
