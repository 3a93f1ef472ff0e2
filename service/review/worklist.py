"""The worklist view at /review/worklist: after a retrain, where a reviewer's hour matters.

The same list as `/v1/worklist` (`service.worklist`), sortable and filterable by reason, each item
opening the phrase view with the bundle before already chosen for the comparison. A reviewer can mark
an item looked at, a whole reason group at once, block one neighbour wherever it is offered (one
batch), and withdraw such a batch. Like every review page: no script, the review token and the CSRF
token for every change, every string escaped.
"""

from __future__ import annotations

from collections.abc import Callable
from urllib.parse import urlencode

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from starlette.concurrency import run_in_threadpool

from service.review.pages import READ_ONLY_FOR_NOW, page, read_form, refused
from service.routes import State
from service.state import ServiceState
from service.worklist import WorklistUnavailable
from widen.errors import DecisionError, DecisionsUnavailable
from widen.worklist.build import Bundle
from widen.worklist.bulk import block_everywhere, mark_looked
from widen.worklist.items import REASONS

__all__ = ["router"]

router = APIRouter(include_in_schema=False)

PER_PAGE = 50


def _view(
    request: Request, state: ServiceState, query: dict[str, str], status: int = 200, **extra: str
) -> HTMLResponse:
    reason = query.get("reason", "") if query.get("reason", "") in REASONS else ""
    looked = query.get("looked", "") if query.get("looked", "") in ("yes", "no") else ""
    order = "phrase" if query.get("sort") == "phrase" else "searches"
    number = int(query["page"]) if query.get("page", "").isdigit() and int(query["page"]) > 0 else 1
    values: dict[str, object] = {"reasons": REASONS, "reason": reason, "looked": looked, "sort": order, **extra}
    try:
        listed = state.worklists.current(state)
    except WorklistUnavailable as exc:
        return page(request, state, "review_worklist.html", status, worklist=None, unavailable=exc.message, **values)
    items = listed.chosen(reason, looked)
    if order == "phrase":
        items = sorted(items, key=lambda i: i.phrase)
    pages = max(1, -(-len(items) // PER_PAGE))
    number = min(number, pages)
    shown = items[(number - 1) * PER_PAGE : number * PER_PAGE]
    base = {"reason": reason, "looked": looked, "sort": order}
    links = {n: "/review/worklist?" + urlencode({**base, "page": str(n)}) for n in range(1, pages + 1)}
    values.update(
        worklist=listed,
        items=shown,
        total=len(items),
        page_number=number,
        page_links=links,
        counts=listed.counts(),
        top_50=listed.coverage(listed.items[:50]),
        looked_share=listed.looked_share(),
    )
    return page(request, state, "review_worklist.html", status, **values)


@router.get("/review/worklist", response_class=HTMLResponse)
def worklist_page(request: Request, state: State, done: str = "") -> HTMLResponse:
    query = dict(request.query_params)
    return _view(request, state, query, done=done[:200])


def _back(form: dict[str, str], done: str) -> RedirectResponse:
    kept = {k: form.get(k, "") for k in ("reason", "looked", "sort") if form.get(k)}
    return RedirectResponse("/review/worklist?" + urlencode({**kept, "done": done}), status_code=303)


async def _again(request: Request, state: ServiceState, form: dict[str, str], problem: str) -> HTMLResponse:
    return await run_in_threadpool(_view, request, state, form, 400, problem=problem)


async def _write(request: Request, state: ServiceState, verb: str, work: Callable[[dict[str, str]], str]) -> Response:
    """A worklist form: the token and CSRF checked, `work(form)` run off the event loop (it returns what
    to say), the decisions taken at once in this worker, and back to the list; or the list again with
    why nothing was recorded ("Not `verb`: ...")."""
    form = await read_form(request)
    if (denied := refused(request, state, form)) is not None:
        return denied

    def run() -> str:
        said = work(form)
        state.check_decisions()
        return said

    try:
        said = await run_in_threadpool(run)
    except (DecisionError, WorklistUnavailable) as exc:
        return await _again(request, state, form, f"Not {verb}: {exc}.")
    except DecisionsUnavailable:
        return await _again(request, state, form, READ_ONLY_FOR_NOW)
    return _back(form, said)


@router.post("/review/worklist/looked")
async def looked(request: Request, state: State) -> Response:
    """Mark one item (`phrase`) or every item of a reason group (`group`: a reason, or `all`) looked at."""

    def mark(form: dict[str, str]) -> str:
        listed = state.worklists.current(state)
        group = form.get("group", "")
        if group and group != "all" and group not in REASONS:
            raise DecisionError(f"no reason called {group!r}")
        if group:
            items = listed.chosen("" if group == "all" else group)
        else:
            items = [i for i in listed.items if i.phrase == form.get("phrase")]
        if not items:
            raise DecisionError("no such item on the list")
        made = mark_looked(state.decision_store, items, listed.version, form.get("reviewer", "")[:100], None)
        return f"Marked {len(made)} item(s) looked at."

    return await _write(request, state, "marked", mark)


@router.post("/review/worklist/block")
async def block(request: Request, state: State) -> Response:
    """Block one neighbour for every phrase that offers it, as one batch."""

    def run(form: dict[str, str]) -> str:
        listed = state.worklists.current(state)
        serving = state.serving
        if serving is None:
            raise DecisionError("no bundle is serving")
        reviewer, note = form.get("reviewer", "")[:100], form.get("note", "").strip() or None
        bundle = Bundle(serving.lexicon, serving.cache)
        batch, made = block_everywhere(state.decision_store, bundle, listed, form.get("neighbour", ""), reviewer, note)
        return f"Batch {batch}: blocked '{made[0].neighbour}' for {len(made)} phrase(s)."

    return await _write(request, state, "blocked", run)


@router.post("/review/worklist/withdraw-batch")
async def withdraw_batch(request: Request, state: State) -> Response:
    """Withdraw every decision of one batch."""

    def run(form: dict[str, str]) -> str:
        batch = form.get("batch", "").strip()
        gone = state.decision_store.withdraw_batch(batch, form.get("reviewer", "")[:100], None)
        return f"Withdrew the {len(gone)} decision(s) of batch {batch}."

    return await _write(request, state, "withdrawn", run)
