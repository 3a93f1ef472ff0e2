"""Who may change decisions from the page: the review token, and the cookie key and CSRF tokens derived from it.

The page asks for the token once and keeps, in an HttpOnly, SameSite=Strict cookie, a key
derived from it (an HMAC, not the token); every form carries a CSRF token derived from that key.
Both are derived, not stored, so any worker checks them without shared state.
"""

from __future__ import annotations

import hashlib
import hmac

__all__ = ["ReviewAccess", "SESSION_COOKIE", "REVIEWER_COOKIE"]

SESSION_COOKIE = "widen_review_key"
REVIEWER_COOKIE = "widen_reviewer"


class ReviewAccess:
    """The review token, and the cookie key and CSRF tokens derived from it."""

    def __init__(self, token: str) -> None:
        self._token = token.encode()

    @property
    def enabled(self) -> bool:
        return bool(self._token)

    def token_matches(self, candidate: str) -> bool:
        return self.enabled and hmac.compare_digest(candidate.encode(), self._token)

    def session_key(self) -> str:
        return hmac.new(self._token, b"widen review session 1", hashlib.sha256).hexdigest()

    def signed_in(self, cookie: str | None) -> bool:
        return (
            self.enabled and bool(cookie) and hmac.compare_digest((cookie or "").encode(), self.session_key().encode())
        )

    def csrf(self) -> str:
        return hmac.new(self._token, b"widen review form 1|" + self.session_key().encode(), hashlib.sha256).hexdigest()

    def csrf_matches(self, value: str) -> bool:
        return self.enabled and hmac.compare_digest(value.encode(), self.csrf().encode())
