"""The review page at /review: what widen does with a phrase and why, and the reviewers' decisions.

Server-rendered with Jinja2 (autoescaping on), no script at all: every control is a plain
form, and the Content-Security-Policy of these pages forbids scripts outright, so a hostile
phrase from a seeker or the corpus is shown as text and cannot run. Writes need the review
token (`WIDEN_REVIEW_TOKEN`, see `service.review.access`); without one the page is read-only
and says so.

The page routes are plain functions where they expand, open a bundle, search the preview index
or wait on the decisions database: FastAPI runs them in its thread pool, so none of that ever
holds up /v1/expand on the event loop.
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any
from urllib.parse import quote, urlencode

from fastapi import APIRouter, Query, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from starlette.concurrency import run_in_threadpool

from service.review.access import REVIEWER_COOKIE, SESSION_COOKIE
from service.review.pages import CSS, READ_ONLY_FOR_NOW, access_of, listed_decisions, page, read_form, refused
from service.review.views import compare_view, phrase_view
from service.review.worklist import router as worklist_router
from service.routes import State
from service.state import ServiceState
from widen.decisions.decision import Decision
from widen.errors import BundleError, DecisionError, DecisionsUnavailable
from widen.expansion.expand import expand
from widen.expansion.query_text import baseline_text

__all__ = ["router"]

router = APIRouter(include_in_schema=False)
router.include_router(worklist_router)


def _phrase_page(
    request: Request, state: ServiceState, q: str, compare: str, status: int = 200, error: str = "", done: str = ""
) -> HTMLResponse:
    serving = state.serving
    values: dict[str, Any] = {"q": q, "compare": compare, "error": error, "bundles": state.store.listing()}
    if done:
        values["done_decision"] = next(
            (d for d in listed_decisions(state, include_withdrawn=True) if str(d.id) == done), None
        )
    if serving is None or not q.strip():
        return page(request, state, "review_phrase.html", status, result=None, views=[], **values)
    q = q[: state.settings.max_query_chars]
    options = serving.options
    result, views = phrase_view(serving.lexicon, serving.cache, state.decisions, q, options)
    active = listed_decisions(state)
    views = [replace(v, decisions=[d for d in active if d.phrase == v.text]) for v in views]
    values.update(result=result, views=views)
    if serving.lexicon.concepts is not None:
        with_concepts = expand(
            serving.lexicon, state.decisions, q, options.with_request(concepts=True), cache=serving.cache
        )
        jobs = [v.text for v in views if v.kind in ("phrase", "term", "unknown")]
        values.update(concepts=with_concepts.concepts, concepts_sent=options.concepts, concept_phrase=(jobs or [""])[0])
    if compare and compare != serving.version:
        try:
            other = state.serving_of(compare)  # judged with the options serving now, side by side
            right = expand(other.lexicon, state.decisions, q, options, cache=other.cache)
            values.update(compared=right, changes=compare_view(result, right))
        except (BundleError, OSError, ValueError) as exc:
            values["compare_error"] = f"bundle {compare} cannot be opened: {exc}"
    index = state.preview_index()
    if index is not None:
        plain = baseline_text(result, options.operator)
        try:
            plain_hits = index.search(plain, 10)
            expanded_hits = index.search(result.full_query, 10)
            matched = index.matching(plain)
            values["preview"] = {
                "plain": plain_hits,
                "expanded": [(h, h.id not in matched) for h in expanded_hits],
                "total_plain": len(matched),
            }
        except ValueError as exc:
            values["preview_error"] = str(exc)
    return page(request, state, "review_phrase.html", status, **values)


@router.get("/debug", response_class=RedirectResponse)
@router.get("/debug/{rest:path}", response_class=RedirectResponse)
async def moved(request: Request, rest: str = "") -> RedirectResponse:
    """The page's old address (it was /debug before it was named for what it is): a permanent redirect,
    query kept, for the bookmarks of reviewers who used it."""
    target = "/review" + (f"/{rest}" if rest else "")
    if request.url.query:
        target += "?" + request.url.query
    return RedirectResponse(target, status_code=308)


@router.get("/review", response_class=HTMLResponse)
def phrase_page(request: Request, state: State, q: str = "", compare: str = "", done: str = "") -> HTMLResponse:
    return _phrase_page(request, state, q, compare, done=done if done.isdigit() else "")


@router.get("/review/review.css")
async def stylesheet() -> Response:
    return Response(CSS, media_type="text/css", headers={"Cache-Control": "max-age=300"})


@router.get("/review/decisions", response_class=HTMLResponse)
def decisions_page(
    request: Request,
    state: State,
    phrase: str = "",
    action: str = "",
    reviewer: str = "",
    shown: str = Query(default="active", alias="state"),
) -> HTMLResponse:
    rows = listed_decisions(state, include_withdrawn=True)
    if phrase:
        rows = [d for d in rows if phrase.lower() in d.phrase or (d.neighbour and phrase.lower() in d.neighbour)]
    if action in ("block", "pin", "exempt", "looked"):
        rows = [d for d in rows if d.action == action]
    if reviewer:
        rows = [d for d in rows if reviewer.lower() in d.reviewer.lower()]
    if shown == "active":
        rows = [d for d in rows if d.withdrawn_at is None]
    elif shown == "withdrawn":
        rows = [d for d in rows if d.withdrawn_at is not None]
    ids = {d.id for d in rows}
    try:
        trail = [a for a in state.decision_store.audit() if a["decision_id"] in ids]
    except DecisionsUnavailable:
        trail = []
    filters = {"phrase": phrase, "action": action, "reviewer": reviewer, "state": shown}
    return page(request, state, "review_decisions.html", decisions=rows, trail=trail, filters=filters)


@router.get("/review/access", response_class=HTMLResponse)
async def access_page(request: Request, state: State) -> HTMLResponse:
    return page(request, state, "review_access.html")


@router.post("/review/access")
async def sign_in(request: Request, state: State) -> Response:
    form = await read_form(request)
    access = access_of(state)
    if not access.enabled:
        return page(
            request, state, "review_access.html", 403, error="This service has no review token; it is read-only."
        )
    if not access.token_matches(form.get("token", "")):
        return page(request, state, "review_access.html", 403, error="That is not the review token.")
    response = RedirectResponse("/review", status_code=303)
    secure = request.url.scheme == "https"
    response.set_cookie(SESSION_COOKIE, access.session_key(), httponly=True, samesite="strict", secure=secure, path="/")
    return response


@router.post("/review/leave")
async def sign_out(request: Request, state: State) -> Response:
    form = await read_form(request)
    if not access_of(state).csrf_matches(form.get("csrf", "")):
        return page(request, state, "review_access.html", 403, error="The form is stale; sign in again.")
    response = RedirectResponse("/review", status_code=303)
    response.delete_cookie(SESSION_COOKIE, path="/", httponly=True, samesite="strict")
    return response


async def _writer_form(request: Request, state: ServiceState) -> tuple[dict[str, str], HTMLResponse | None]:
    """The posted form, and the refusal page when the poster may not write."""
    form = await read_form(request)
    return form, refused(request, state, form)


def _after_write(request: Request, state: ServiceState, form: dict[str, str], decision: Decision) -> Response:
    state.check_decisions()  # this worker at once; the others within their decisions poll
    target = "/review?" + urlencode({"q": form.get("q", "") or decision.phrase, "done": str(decision.id)})
    if form.get("compare"):
        target += "&" + urlencode({"compare": form["compare"]})
    response = RedirectResponse(target, status_code=303)
    # Remembered to prefill the next form; quoted, since a cookie carries only ASCII.
    remembered = quote(decision.reviewer[:100], safe="")
    response.set_cookie(REVIEWER_COOKIE, remembered, httponly=True, samesite="strict", path="/")
    return response


async def _again(request: Request, state: ServiceState, form: dict[str, str], problem: str) -> HTMLResponse:
    """The phrase page the form came from, with what was wrong (400), rendered off the event loop."""
    return await run_in_threadpool(
        _phrase_page, request, state, form.get("q", ""), form.get("compare", ""), 400, problem
    )


@router.post("/review/decide")
async def decide(request: Request, state: State) -> Response:
    form, denied = await _writer_form(request, state)
    if denied is not None:
        return denied
    action = form.get("action", "")
    neighbour = form.get("other", "").strip() or form.get("neighbour", "").strip() or None
    weight: float | None = None
    if action == "pin":
        try:
            weight = float(form.get("weight", ""))
        except ValueError:
            weight = math.nan
        if not math.isfinite(weight):
            return await _again(request, state, form, "Pin needs a weight, a number between 0 and 1.")
    if action == "exempt":
        neighbour = None
    try:
        # The database may wait for another writer's lock: off the event loop, like the API's writes.
        decision = await run_in_threadpool(
            state.decision_store.add,
            form.get("phrase", ""),
            action,
            form.get("reviewer", "")[:100],
            neighbour,
            weight,
            form.get("note", "").strip() or None,
        )
    except DecisionError as exc:
        return await _again(request, state, form, f"Not recorded: {exc}.")
    except DecisionsUnavailable:
        return await _again(request, state, form, READ_ONLY_FOR_NOW)
    return await run_in_threadpool(_after_write, request, state, form, decision)


@router.post("/review/withdraw")
async def withdraw(request: Request, state: State) -> Response:
    form, denied = await _writer_form(request, state)
    if denied is not None:
        return denied
    try:
        decision = await run_in_threadpool(
            state.decision_store.withdraw,
            int(form.get("id", "0") or 0),
            form.get("reviewer", "")[:100],
            form.get("note", "").strip() or None,
        )
    except (DecisionError, ValueError) as exc:
        return await _again(request, state, form, f"Not withdrawn: {exc}.")
    except DecisionsUnavailable:
        return await _again(request, state, form, READ_ONLY_FOR_NOW)
    return await run_in_threadpool(_after_write, request, state, form, decision)
