"""How the review pages are rendered: the templates, the headers every page carries, the form reader,
and who may write (the review token, its cookie key and CSRF token: `service.review.access`)."""

from __future__ import annotations

from pathlib import Path
from typing import Any
from urllib.parse import parse_qs, unquote, urlencode

from fastapi import Request
from fastapi.responses import HTMLResponse
from jinja2 import Environment, FileSystemLoader, select_autoescape

from service.review.access import REVIEWER_COOKIE, SESSION_COOKIE, ReviewAccess
from service.state import ServiceState
from widen.decisions.decision import Decision
from widen.errors import DecisionsUnavailable

__all__ = ["page", "read_form", "access_of", "listed_decisions", "refused", "READ_ONLY_FOR_NOW", "CSS"]

TEMPLATES = Path(__file__).with_name("templates")
MAX_FORM_FIELD = 2000
CSP = (
    "default-src 'none'; style-src 'self'; img-src 'self'; form-action 'self'; frame-ancestors 'none'; base-uri 'none'"
)

#: What the page says when a write cannot reach the decisions database.
READ_ONLY_FOR_NOW = (
    "Not recorded: the decisions database cannot be reached just now, so the page is read-only for now."
    " Search keeps serving the decisions loaded last; try again in a moment."
)


def _environment() -> Environment:
    env = Environment(
        loader=FileSystemLoader(str(TEMPLATES)),
        autoescape=select_autoescape(enabled_extensions=("html",), default_for_string=True),
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["review_link"] = lambda params: "/review?" + urlencode({k: v for k, v in params.items() if v})
    env.filters["num"] = lambda v, places=3: "" if v is None else f"{v:.{places}f}"
    return env


_ENV = _environment()
CSS = (TEMPLATES / "review.css").read_bytes()


def access_of(state: ServiceState) -> ReviewAccess:
    token = state.settings.review_token
    return ReviewAccess(token.get_secret_value() if token else "")


async def read_form(request: Request) -> dict[str, str]:
    raw = (await request.body()).decode("utf-8", errors="replace")
    parsed = parse_qs(raw, keep_blank_values=True, max_num_fields=50)
    return {k: v[0][:MAX_FORM_FIELD] for k, v in parsed.items() if v}


def page(request: Request, state: ServiceState, template: str, status: int = 200, **values: Any) -> HTMLResponse:
    access = access_of(state)
    signed_in = access.signed_in(request.cookies.get(SESSION_COOKIE))
    serving = state.serving
    html = _ENV.get_template(template).render(
        writable=access.enabled,
        signed_in=signed_in,
        csrf=access.csrf() if signed_in else "",
        reviewer=unquote(request.cookies.get(REVIEWER_COOKIE, ""))[:100],
        model=serving.lexicon if serving else None,
        not_ready=state.not_ready_reason,
        decisions_stale=state.decisions_stale,
        **values,
    )
    response = HTMLResponse(html, status_code=status)
    response.headers["Content-Security-Policy"] = CSP
    response.headers["X-Content-Type-Options"] = "nosniff"
    response.headers["Referrer-Policy"] = "same-origin"
    response.headers["Cache-Control"] = "no-store"
    return response


def listed_decisions(state: ServiceState, include_withdrawn: bool = False) -> list[Decision]:
    """The decisions to list; none while their database is away (the page then says it is read-only
    for now, and the expansions shown still apply the decisions loaded last)."""
    try:
        return state.decision_store.entries(include_withdrawn=include_withdrawn)
    except DecisionsUnavailable:
        return []


def refused(request: Request, state: ServiceState, form: dict[str, str]) -> HTMLResponse | None:
    """The refusal page when the poster may not write, else None."""
    access = access_of(state)
    if not access.enabled:
        return page(
            request, state, "review_access.html", 403, error="This service has no review token; it is read-only."
        )
    if not access.signed_in(request.cookies.get(SESSION_COOKIE)):
        return page(request, state, "review_access.html", 401, error="Give the review token before changing decisions.")
    if not access.csrf_matches(form.get("csrf", "")):
        return page(
            request, state, "review_access.html", 403, error="The form is stale or came from elsewhere; try again."
        )
    return None
