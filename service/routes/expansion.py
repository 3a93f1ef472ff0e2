"""`/v1/expand`: one query (GET or POST) or a batch, answered with the core's result model."""

from __future__ import annotations

from typing import Literal

from fastapi import APIRouter, Query, Request
from fastapi.responses import Response

from service.errors import ERRORS, ApiError
from service.routes import State
from service.state import ServiceState
from service.wire import BatchRequest, BatchResponse, ExpandRequest, RequestOptions
from widen.expansion.expand import expand
from widen.expansion.result import ExpansionResult
from widen.text.tokenize import tokens

__all__ = ["router", "expand_one"]

router = APIRouter(tags=["expand"])


def _check_query(query: str, field: str, max_chars: int, max_tokens: int) -> None:
    if not query.strip():
        raise ApiError(400, "empty_query", "the query is empty", field)
    if len(query) > max_chars:
        raise ApiError(400, "query_too_long", f"the query is over {max_chars} characters", field)
    count = len(tokens(query))
    if count == 0:
        raise ApiError(400, "empty_query", "the query has no words", field)
    if count > max_tokens:
        raise ApiError(400, "query_too_long", f"the query is over {max_tokens} words", field)


def expand_one(state: ServiceState, query: str, asked: RequestOptions, field: str) -> ExpansionResult:
    """Expand one query with the serving bundle, as the request asks; ApiError for a 4xx or 503."""
    serving = state.serving  # taken once: a swap never changes the bundle under this request
    if serving is None:
        raise ApiError(503, "not_ready", state.not_ready_reason)
    _check_query(query, field, state.settings.max_query_chars, serving.options.max_tokens)
    options = serving.options.with_request(
        max=asked.max,
        min_similarity=asked.min_similarity,
        original_boost=asked.original_boost,
        operator=asked.operator,
        places=asked.places,
        match=asked.match,
    )
    return expand(serving.lexicon, state.decisions, query, options, explain=asked.explain, cache=serving.cache)


def _json(result: ExpansionResult | BatchResponse) -> Response:
    return Response(result.model_dump_json(), media_type="application/json")


def _cached(state: ServiceState, query: str, asked: RequestOptions, field: str, edge_caches: bool) -> Response:
    if edge_caches:  # the edge missed this key a moment ago and will keep the response itself
        return _json(expand_one(state, query, asked, field))
    serving, decisions = state.serving, state.decisions
    key = (
        serving.version if serving else None,
        decisions.version,
        query,
        asked.max,
        asked.min_similarity,
        asked.explain,
        asked.original_boost,
        asked.operator,
        asked.places,
        asked.match,
    )
    found = state.cache.get(key)
    if found is None:
        state.telemetry.cache_misses.inc()
        found = expand_one(state, query, asked, field).model_dump_json().encode()
        state.cache.put(key, found)
    else:
        state.telemetry.cache_hits.inc()
    return Response(found, media_type="application/json")


@router.get("/v1/expand", response_model=ExpansionResult, responses=ERRORS)
async def expand_get(
    request: Request,
    state: State,
    q: str = Query(min_length=1, max_length=256, description="the seeker's query"),
    max: int | None = Query(default=None, ge=1, le=50),
    min_similarity: float | None = Query(default=None, ge=0.0, le=1.0),
    explain: bool = False,
    original_boost: float | None = Query(default=None, gt=0.0, le=100.0),
    operator: Literal["AND", "OR"] | None = None,
    places: Literal["text", "field"] | None = Query(
        default=None, description="a place or employer in the free text, or in its own field of the index"
    ),
    match: Literal["job", "all"] | None = Query(
        default=None, description="all (default): every segment but noise words is required; job: only the job"
    ),
) -> Response:
    """Expand one query; the result model is the same as the CLI's JSON."""
    asked = RequestOptions.model_construct(
        max=max,
        min_similarity=min_similarity,
        explain=explain,
        original_boost=original_boost,
        operator=operator,
        places=places,
        match=match,
    )
    return _cached(state, q, asked, "q", bool(request.scope.get("widen.edge_caches")))


@router.post("/v1/expand", response_model=ExpansionResult, responses=ERRORS)
async def expand_post(body: ExpandRequest, state: State) -> Response:
    return _cached(state, body.query, body, "query", False)


@router.post("/v1/expand/batch", response_model=BatchResponse, responses=ERRORS)
async def expand_batch(body: BatchRequest, state: State) -> Response:
    if len(body.queries) > state.settings.max_batch:
        raise ApiError(400, "batch_too_large", f"at most {state.settings.max_batch} queries a batch", "queries")
    results = [expand_one(state, q, body, f"queries.{n}") for n, q in enumerate(body.queries)]
    return _json(BatchResponse(results=results))
