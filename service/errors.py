"""The one error shape of the service: every 4xx and 5xx is `{"error": {"code", "message", "field"}}`."""

from __future__ import annotations

import logging
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from pydantic import BaseModel
from starlette.exceptions import HTTPException as StarletteHTTPException

from widen.errors import DecisionsUnavailable

__all__ = ["ApiError", "ErrorBody", "ERRORS", "error_response", "install_error_handlers"]


class ErrorDetail(BaseModel):
    code: str
    message: str
    field: str | None = None


class ErrorBody(BaseModel):
    error: ErrorDetail


#: The error responses every route documents in the OpenAPI document.
ERRORS: dict[int | str, dict[str, Any]] = {
    code: {"model": ErrorBody, "description": text}
    for code, text in (
        (400, "bad input (the error names the field)"),
        (401, "no token"),
        (403, "wrong token"),
        (404, "not found"),
        (409, "conflict with the current state"),
        (413, "body too large"),
        (503, "no verified bundle loaded"),
    )
}


class ApiError(Exception):
    """An error a handler answers with: status, a stable code, a message for people, the field at fault."""

    def __init__(self, status: int, code: str, message: str, field: str | None = None) -> None:
        super().__init__(message)
        self.status, self.code, self.message, self.field = status, code, message, field


def error_response(
    status: int, code: str, message: str, field: str | None = None, headers: dict[str, str] | None = None
) -> JSONResponse:
    body = {"error": {"code": code, "message": message, "field": field}}
    return JSONResponse(body, status_code=status, headers=headers)


def _field(loc: Any) -> str | None:
    parts = [str(p) for p in loc]
    if parts and parts[0] in ("body", "query", "path", "header"):
        parts = parts[1:]  # where it was, not which field
    return ".".join(parts) or None


async def _decisions_unavailable(request: Request, exc: Exception) -> JSONResponse:
    # The message names the database with its password masked (widen.decisions.postgres.masked_url).
    return error_response(503, "decisions_unavailable", f"{exc}; nothing was written, try again shortly")


async def _api_error(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, ApiError)
    return error_response(exc.status, exc.code, exc.message, exc.field)


async def _invalid(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, RequestValidationError)
    first = exc.errors()[0] if exc.errors() else {"type": "invalid", "msg": "invalid request", "loc": ()}
    if str(first.get("type", "")) == "json_invalid":
        return error_response(400, "invalid_json", "the body is not valid JSON")
    return error_response(
        400, "invalid_request", str(first.get("msg", "invalid request")), _field(first.get("loc", ()))
    )


async def _http(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, StarletteHTTPException)
    if exc.status_code == 400:  # the framework could not read the body at all (not UTF-8)
        return error_response(400, "invalid_body", "the body is not valid JSON in UTF-8")
    code = {404: "not_found", 405: "method_not_allowed"}.get(exc.status_code, "http_error")
    return error_response(exc.status_code, code, str(exc.detail), None, getattr(exc, "headers", None))


async def _unexpected(request: Request, exc: Exception) -> JSONResponse:
    logging.getLogger("widen.serve").exception("unexpected error")
    return error_response(500, "internal", "unexpected error; the request id is in the response headers")


def install_error_handlers(app: FastAPI) -> None:
    """Answer every error of `app` in the one shape."""
    app.add_exception_handler(ApiError, _api_error)
    app.add_exception_handler(DecisionsUnavailable, _decisions_unavailable)
    app.add_exception_handler(RequestValidationError, _invalid)
    app.add_exception_handler(StarletteHTTPException, _http)
    app.add_exception_handler(Exception, _unexpected)
