"""What the review tests share: an app over a store with a review token, signing in, reading a page's tags."""

from __future__ import annotations

import re
from html.parser import HTMLParser
from pathlib import Path

from fastapi.testclient import TestClient

from service.app import create_app
from service.settings import Settings

__all__ = ["TOKEN", "REVIEWER", "review_client", "csrf_of", "sign_in", "tags_of"]

TOKEN = "tollbridge-review-7f3a"
REVIEWER = "Dana, search team"


def review_client(store: Path, token: str | None = TOKEN, **extra: object) -> TestClient:
    settings = Settings(store=store, access_log=False, review_token=token, **extra)  # type: ignore[arg-type]
    return TestClient(create_app(settings, watch=False))


def csrf_of(html: str) -> str:
    found = re.search(r'name="csrf" value="([0-9a-f]{64})"', html)
    assert found, "no CSRF field on the page"
    return found.group(1)


def sign_in(c: TestClient) -> str:
    got = c.post("/review/access", data={"token": TOKEN}, follow_redirects=False)
    assert got.status_code == 303
    return csrf_of(c.get("/review", params={"q": "lorry driver"}).text)


class _Tags(HTMLParser):
    """Every start tag and attribute, as the browser's tokeniser would see them (stdlib parser)."""

    def __init__(self) -> None:
        super().__init__()
        self.tags: list[tuple[str, dict[str, str | None]]] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append((tag, dict(attrs)))


def tags_of(html: str) -> list[tuple[str, dict[str, str | None]]]:
    parser = _Tags()
    parser.feed(html)
    return parser.tags
