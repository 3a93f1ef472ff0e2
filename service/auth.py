"""Bearer tokens: one check, compared in constant time, for the admin and the review token."""

from __future__ import annotations

import hmac

from fastapi import Request

from service.errors import ApiError
from service.state import ServiceState

__all__ = ["bearer", "require_admin", "require_reviewer"]


def bearer(request: Request, token: str, what: str) -> None:
    """401 without a bearer token, 403 with a wrong one; compared in constant time."""
    header = request.headers.get("authorization", "")
    if not header.startswith("Bearer ") or not header[7:]:
        article = "an" if what[0] in "aeiou" else "a"
        raise ApiError(401, "unauthorized", f"{article} {what} token is required: Authorization: Bearer <token>")
    if not hmac.compare_digest(header[7:].encode(), token.encode()):
        raise ApiError(403, "forbidden", f"the {what} token is wrong")


def require_admin(request: Request, state: ServiceState) -> None:
    """Admin endpoints do not exist (404) without a configured admin token."""
    token = state.settings.admin_token.get_secret_value() if state.settings.admin_token else ""
    if not token:
        raise ApiError(404, "not_found", "Not Found")
    bearer(request, token, "admin")


def require_reviewer(request: Request, state: ServiceState) -> None:
    """Decision writes are refused (403 review_disabled) without a configured review token."""
    token = state.settings.review_token.get_secret_value() if state.settings.review_token else ""
    if not token:
        raise ApiError(403, "review_disabled", "this service has no review token (WIDEN_REVIEW_TOKEN): read-only")
    bearer(request, token, "review")
