"""The demo search page: a job board's front end over the tantivy index of the demo dump.

The page calls `/v1/expand` over HTTP like a real front end, then sends the resulting query
text here; each hit says whether only an expansion found it. Mounted by `widen serve` when
`WIDEN_DEMO_INDEX` names a postings dump.
"""

from __future__ import annotations

from pathlib import Path

from fastapi import APIRouter
from fastapi.responses import HTMLResponse
from pydantic import BaseModel, ConfigDict, Field

from service.errors import ApiError
from service.routes import State

__all__ = ["router"]

PAGE = (Path(__file__).resolve().parent.parent / "static" / "demo.html").read_text(encoding="utf-8")

router = APIRouter(tags=["demo"])


class DemoSearch(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True)

    query_text: str = Field(max_length=8192)
    plain_text: str = Field(default="", max_length=8192)
    # widen's own query_text: tells a posting an expansion found from one that only shares a word.
    expansion_text: str = Field(default="", max_length=8192)
    limit: int = Field(default=20, ge=1, le=100)


class DemoHit(BaseModel):
    id: str
    title: str
    location: str
    employer: str
    score: float
    via_expansion: bool
    shares_a_word_only: bool = False


class DemoHits(BaseModel):
    hits: list[DemoHit]


@router.get("/demo", response_class=HTMLResponse)
async def demo_page() -> HTMLResponse:
    """The demo job board's search page."""
    return HTMLResponse(PAGE)


@router.post("/demo/search", response_model=DemoHits)
async def demo_search(body: DemoSearch, state: State) -> DemoHits:
    """Run a query text on the demo index; mark hits the plain words alone do not match, and of those,
    with `expansion_text`, the ones widen's query_text does not match either (they only share a word)."""
    index = state.demo_index
    if index is None:  # the router is only mounted with a demo index
        raise ApiError(404, "not_found", "Not Found")
    try:
        hits = index.search(body.query_text, body.limit)
        plain = index.matching(body.plain_text) if body.plain_text else set()
        widened = index.matching(body.expansion_text) if body.expansion_text else None
    except ValueError as exc:
        raise ApiError(400, "invalid_query_text", f"the search engine could not parse it: {exc}", "query_text") from exc
    return DemoHits(
        hits=[
            DemoHit(
                id=h.id,
                title=h.title,
                location=h.location,
                employer=h.employer,
                score=h.score,
                via_expansion=bool(body.plain_text) and h.id not in plain and (widened is None or h.id in widened),
                shares_a_word_only=widened is not None and h.id not in plain and h.id not in widened,
            )
            for h in hits
        ]
    )
