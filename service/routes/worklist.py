"""`/v1/worklist`: the serving bundle's worklist, paged, for a nightly job or a team's own tools.

The same list as the review page's worklist view (`service.worklist`); it needs the day's query log
(`WIDEN_QUERY_LOG`). A plain function: FastAPI runs it in its thread pool, so building a list (a few
seconds after a new bundle) never holds up /v1/expand on the event loop.
"""

from __future__ import annotations

import json
from typing import Annotated, Any, Literal

from fastapi import APIRouter, Query
from fastapi.responses import Response

from service.errors import ERRORS, ApiError
from service.routes import State
from service.routes.expansion import JsonBody
from service.worklist import WorklistUnavailable
from widen.worklist.items import REASONS

__all__ = ["router"]

router = APIRouter(tags=["worklist"])

Reason = Literal["changed", "unsure", "coded", "coded_wording", "finds_little", "stale_decision"]
assert set(Reason.__args__) == set(REASONS)  # type: ignore[attr-defined]


@router.get("/v1/worklist", responses=ERRORS)
def worklist(
    state: State,
    reason: Annotated[Reason | None, Query(description="only items with this reason")] = None,
    looked: Annotated[Literal["yes", "no"] | None, Query(description="only items looked at, or not")] = None,
    page: Annotated[int, Query(ge=1, le=100_000)] = 1,
    per_page: Annotated[int, Query(ge=1, le=500)] = 50,
) -> Response:
    """The phrases seekers type whose expansions need a look after the last retrain, busiest first:
    `{version, against, searches_per_day, counts, top_50_coverage, looked_share, items, page, pages,
    total}`; each item has its phrase, searches a day, reasons, notes in words, changes and postings
    moved. 409 `no_query_log` when the service has no query log."""
    try:
        listed = state.worklists.current(state)
    except WorklistUnavailable as exc:
        raise ApiError(exc.status, exc.code, exc.message) from exc
    chosen = listed.chosen(reason or "", looked or "")
    pages = max(1, -(-len(chosen) // per_page))
    body: dict[str, Any] = listed.as_dict(chosen[(page - 1) * per_page : page * per_page])
    body.update(page=page, pages=pages, total=len(chosen), reasons=REASONS)
    return JsonBody(json.dumps(body, ensure_ascii=False).encode())
