"""`/v1/expand`: one query (GET or POST) or a batch, answered with the core's result model.

One way through for GET and POST alike: a request becomes an `ExpandCall` (the GET's query string
through `read_query_string`, the POST's body through its model), and `answer` checks the query's
limits, looks the call up in the response cache under one key, expands it with the serving bundle
and frames the JSON. `service.middleware.expand_shortcut.ExpandShortcut` calls the same two
functions for a GET before the framework's routing, so a front end's GETs cost no more than they
must; the route below answers the GETs it lets through (browser calls, for CORS) the same way.
"""

from __future__ import annotations

from typing import Any, NamedTuple
from urllib.parse import parse_qsl

from fastapi import APIRouter, Request
from fastapi.responses import Response
from pydantic import ValidationError

from service.asgi import Receive, Scope, Send, send_json
from service.errors import ERRORS, ApiError
from service.routes import State
from service.state import ServiceState, Serving
from service.wire import BatchRequest, BatchResponse, ExpandRequest, RequestOptions, asked_of, boost_scale_of
from widen.decisions.decision import DecisionSet
from widen.expansion.expand import expand
from widen.expansion.result import ExpansionResult
from widen.text.tokenize import tokens

__all__ = ["router", "ExpandCall", "read_query_string", "answer", "JsonBody"]

router = APIRouter(tags=["expand"])

#: What a GET with `q` alone asks: the options as served.
_AS_SERVED = RequestOptions()
_ASKABLE = frozenset(RequestOptions.model_fields)


class ExpandCall(NamedTuple):
    """One query to expand: the seeker's text, the request field it came in (named by an error), and
    what the request asks of the options."""

    query: str
    field: str
    asked: RequestOptions


def read_query_string(raw: bytes) -> ExpandCall:
    """A GET's query string as the call it asks for; ApiError naming the parameter at fault. Read as
    the framework reads one (latin-1, then percent-decoding as UTF-8; the last of a repeated name
    wins); parameters it does not know are ignored."""
    values = dict(parse_qsl(raw.decode("latin-1"), keep_blank_values=True))
    query = values.pop("q", None)
    if query is None:
        raise ApiError(400, "invalid_request", "Field required", "q")
    asked = {k: v for k, v in values.items() if k in _ASKABLE}
    if not asked:
        return ExpandCall(query, "q", _AS_SERVED)
    try:
        return ExpandCall(query, "q", RequestOptions.model_validate(asked, strict=False))
    except ValidationError as exc:
        first = exc.errors()[0]
        raise ApiError(400, "invalid_request", str(first["msg"]), ".".join(str(p) for p in first["loc"])) from exc


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


def _expanded(state: ServiceState, serving: Serving, decisions: DecisionSet, call: ExpandCall) -> ExpansionResult:
    """The call expanded with one serving bundle and one snapshot of the decisions (a swap of either
    never changes them under a request in flight); ApiError for a query over the limits."""
    _check_query(call.query, call.field, state.settings.max_query_chars, serving.options.max_tokens)
    asked = call.asked
    options = serving.options.with_request(
        max=asked.max,
        min_similarity=asked.min_similarity,
        boost_scale=boost_scale_of(asked),
        operator=asked.operator,
        places=asked.places,
        match=asked.match,
        concepts=asked.concepts,
    )
    return expand(serving.lexicon, decisions, call.query, options, explain=asked.explain, cache=serving.cache)


def answer(state: ServiceState, call: ExpandCall) -> bytes:
    """The response body of one call, from the response cache when it holds it (by bundle, decisions,
    query and options, so a new bundle or decision is never answered from it); ApiError for a 4xx or 503."""
    serving, decisions = state.serving, state.decisions  # each taken once, for the whole request
    if serving is None:
        raise ApiError(503, "not_ready", state.not_ready_reason)
    cache = state.cache
    key = (serving.version, decisions.version, call.query, call.asked)
    if cache.size > 0:
        found = cache.get(key)
        if found is not None:
            state.telemetry.cache_hits.inc()
            return found
        state.telemetry.cache_misses.inc()
    body = _expanded(state, serving, decisions, call).model_dump_json().encode()
    cache.put(key, body)
    return body


class JsonBody(Response):
    """A 200 with a body already in JSON, framed by `send_json` as the shortcut frames one."""

    media_type = "application/json"

    def __init__(self, body: bytes) -> None:
        self.json, self.body, self.status_code, self.background = body, body, 200, None

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        await send_json(send, self.json)


def _query_parameters() -> list[dict[str, Any]]:
    """The GET's parameters for the OpenAPI document, from the models `read_query_string` checks with."""
    schema = RequestOptions.model_json_schema()
    q = {
        "name": "q",
        "in": "query",
        "required": True,
        "description": "the seeker's query, as typed (at most WIDEN_MAX_QUERY_CHARS characters, 256 by default)",
        "schema": {"type": "string", "minLength": 1},
    }
    return [q] + [
        {"name": name, "in": "query", "required": False, "description": prop.get("description", ""), "schema": prop}
        for name, prop in schema["properties"].items()
    ]


@router.get(
    "/v1/expand",
    response_model=ExpansionResult,
    responses=ERRORS,
    openapi_extra={"parameters": _query_parameters()},
)
async def expand_get(request: Request, state: State) -> Response:
    """Expand one query; the result model is the same as the CLI's JSON."""
    return JsonBody(answer(state, read_query_string(request.scope.get("query_string", b""))))


@router.post("/v1/expand", response_model=ExpansionResult, responses=ERRORS)
async def expand_post(body: ExpandRequest, state: State) -> Response:
    return JsonBody(answer(state, ExpandCall(body.query, "query", asked_of(body))))


@router.post("/v1/expand/batch", response_model=BatchResponse, responses=ERRORS)
async def expand_batch(body: BatchRequest, state: State) -> Response:
    if len(body.queries) > state.settings.max_batch:
        raise ApiError(400, "batch_too_large", f"at most {state.settings.max_batch} queries a batch", "queries")
    serving, decisions = state.serving, state.decisions
    if serving is None:
        raise ApiError(503, "not_ready", state.not_ready_reason)
    asked = asked_of(body)
    results = [
        _expanded(state, serving, decisions, ExpandCall(q, f"queries.{n}", asked)) for n, q in enumerate(body.queries)
    ]
    return JsonBody(BatchResponse(results=results).model_dump_json().encode())
