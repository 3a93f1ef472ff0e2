"""The expansion service: FastAPI on uvicorn, a thin shell over the expansion core.

`create_app(settings, holder)` wires everything in one place; tests build the app with their
own settings. Every 4xx and 5xx has one JSON shape, `{"error": {"code", "message", "field"}}`.
"""

from __future__ import annotations

import hmac
import json
import logging
import sys
import time
import uuid
from collections.abc import AsyncIterator, Awaitable, Callable, MutableMapping
from contextlib import asynccontextmanager
from typing import Any, Literal

from fastapi import FastAPI, Query, Request
from fastapi import Path as PathParam
from fastapi.exceptions import RequestValidationError
from fastapi.middleware.cors import CORSMiddleware
from fastapi.responses import JSONResponse, Response
from prometheus_client import CollectorRegistry, Counter, Gauge, Histogram, Info, generate_latest
from prometheus_client.exposition import CONTENT_TYPE_LATEST
from pydantic import BaseModel, ConfigDict, Field
from starlette.exceptions import HTTPException as StarletteHTTPException

from service.cache import ResultCache
from service.decisions import MAX_ID, Decision, DecisionError, DecisionMissing, DecisionStore, DecisionWithdrawn
from service.expansion import ExpansionOptions, expand
from service.lifecycle import ModelHolder
from service.result import ExpansionResult
from service.settings import Settings
from training.bundle import Store
from training.tokenize import tokens

__all__ = ["create_app", "app_from_environment", "ApiError"]

Scope = MutableMapping[str, Any]
Message = MutableMapping[str, Any]
Receive = Callable[[], Awaitable[Message]]
Send = Callable[[Message], Awaitable[None]]
ASGIApp = Callable[[Scope, Receive, Send], Awaitable[None]]

ROUTES = (
    "/v1/expand",
    "/v1/expand/batch",
    "/v1/model",
    "/healthz",
    "/readyz",
    "/metrics",
    "/v1/admin/reload",
    "/v1/decisions",
    "/v1/decisions/export",
    "/v1/decisions/import",
)


def route_label(path: str) -> str:
    """The metrics label of a path: a known route, a family of routes, or other (bounded cardinality)."""
    if path in ROUTES:
        return path
    if path.startswith("/v1/decisions/"):
        return "/v1/decisions/{id}"
    if path == "/debug" or path.startswith("/debug/"):
        return "/debug"
    if path == "/demo" or path.startswith("/demo/"):
        return "/demo"
    return "other"


access_log = logging.getLogger("widen.access")


# -- the wire models ---------------------------------------------------------------------


class ErrorDetail(BaseModel):
    code: str
    message: str
    field: str | None = None


class ErrorBody(BaseModel):
    error: ErrorDetail


class _Options(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True)

    max: int | None = Field(default=None, ge=1, le=50, description="at most this many expansions a segment")
    min_similarity: float | None = Field(default=None, ge=0.0, le=1.0)
    explain: bool = False
    original_boost: float | None = Field(default=None, gt=0.0, le=100.0)
    operator: Literal["AND", "OR"] | None = None


class ExpandRequest(_Options):
    query: str = Field(min_length=1, max_length=256, description="the seeker's query, as typed")


class BatchRequest(_Options):
    queries: list[str] = Field(min_length=1, max_length=100)


class BatchResponse(BaseModel):
    results: list[ExpansionResult]


class ModelResponse(BaseModel):
    version: str
    created_at: str
    vocabulary_size: int
    phrase_count: int
    corpus: dict[str, Any]
    gate: dict[str, Any]


class Status(BaseModel):
    status: str
    version: str | None = None


class ReloadResponse(BaseModel):
    result: str
    version: str | None


class DecisionRequest(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True)

    phrase: str = Field(min_length=1, max_length=256, description="the phrase the decision is for, as typed")
    neighbour: str | None = Field(default=None, max_length=256, description="for block and pin; null for never")
    action: Literal["block", "pin", "never"]
    weight: float | None = Field(default=None, gt=0.0, lt=1.0, description="for pin only: the clause weight")
    reviewer: str = Field(min_length=1, max_length=100)
    note: str | None = Field(default=None, max_length=1000)


class DecisionList(BaseModel):
    decisions: list[Decision]


class DecisionExport(BaseModel):
    format: Literal["widen-decisions"]
    version: int
    decisions: list[dict[str, Any]] = Field(max_length=100_000)


class ImportResponse(BaseModel):
    added: int


ERRORS: dict[int | str, dict[str, Any]] = {
    code: {"model": ErrorBody, "description": text}
    for code, text in (
        (400, "bad input (the error names the field)"),
        (401, "no token"),
        (403, "wrong token"),
        (404, "not found"),
        (409, "conflict with the current state"),
        (413, "body too large"),
        (503, "no verified bundle loaded"),
    )
}


class ApiError(Exception):
    def __init__(self, status: int, code: str, message: str, field: str | None = None) -> None:
        super().__init__(message)
        self.status, self.code, self.message, self.field = status, code, message, field


def _error(
    status: int, code: str, message: str, field: str | None = None, headers: dict[str, str] | None = None
) -> JSONResponse:
    body = {"error": {"code": code, "message": message, "field": field}}
    return JSONResponse(body, status_code=status, headers=headers)


# -- telemetry ---------------------------------------------------------------------------


class Telemetry:
    """Prometheus metrics of one app, in its own registry."""

    def __init__(self) -> None:
        self.registry = CollectorRegistry()
        self.requests = Counter(
            "widen_requests", "HTTP requests by route and status", ["route", "status"], registry=self.registry
        )
        self.latency = Histogram(
            "widen_request_seconds",
            "HTTP request latency by route",
            ["route"],
            buckets=(0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 1.0),
            registry=self.registry,
        )
        self.cache_hits = Counter("widen_cache_hits", "expansion cache hits", registry=self.registry)
        self.cache_misses = Counter("widen_cache_misses", "expansion cache misses", registry=self.registry)
        self.model = Info("widen_model", "the serving bundle", registry=self.registry)
        self.reloads = Counter("widen_reloads", "bundles loaded", registry=self.registry)
        self.refused = Counter("widen_reloads_refused", "bundles refused (failed verification)", registry=self.registry)
        self.ready = Gauge("widen_ready", "1 while a verified bundle serves", registry=self.registry)

    def event(self, kind: str, version: str) -> None:
        if kind == "loaded":
            self.reloads.inc()
            self.model.info({"version": version})
            self.ready.set(1)
        elif kind == "refused":
            self.refused.inc()


# -- the edge: request ids, body limit, access log, metrics (plain ASGI, cheap) ----------------


class Edge:
    """Outermost middleware. Parameters: the app, the settings, the telemetry, the model holder
    and the response cache.

    A GET of /v1/expand whose exact query string was answered before, for the same bundle and
    decisions, is answered here from the cache without entering the framework.
    """

    def __init__(
        self, app: ASGIApp, settings: Settings, telemetry: Telemetry, holder: ModelHolder, cache: ResultCache[bytes]
    ) -> None:
        self.app, self.settings, self.telemetry, self.holder, self.cache = app, settings, telemetry, holder, cache

    def _get_key(self, scope: Scope) -> tuple[object, ...] | None:
        if scope["method"] != "GET" or scope.get("path") != "/v1/expand" or self.cache.size <= 0:
            return None
        if any(name == b"origin" for name, _ in scope.get("headers", [])):
            return None  # browser calls go through the CORS layer, which this shortcut would skip
        serving = self.holder.serving
        if serving is None:
            return None
        return ("GET", serving.version, self.holder.decisions.version, scope.get("query_string", b""))

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        started = time.perf_counter()
        request_id = _request_id(scope)
        status = {"code": 500}

        async def with_id(message: Message) -> None:
            if message["type"] == "http.response.start":
                status["code"] = message["status"]
                message.setdefault("headers", [])
                message["headers"] = [*message["headers"], (b"x-request-id", request_id.encode())]
            await send(message)

        send_with_id: Send = with_id
        try:
            key = self._get_key(scope)
            if key is not None:
                found = self.cache.get(key)
                if found is not None:
                    self.telemetry.cache_hits.inc()
                    await Response(found, media_type="application/json")(scope, receive, send_with_id)
                    return
                scope["widen.edge_caches"] = True  # the handler need not cache this response again
                send_with_id = _keep_body(send_with_id, self.cache, key)
            if scope["method"] in ("POST", "PUT", "PATCH", "DELETE"):
                body = await _read_limited(receive, self.settings.max_body_bytes)
                if body is None:
                    response = _error(413, "body_too_large", f"the body is over {self.settings.max_body_bytes} bytes")
                    await response(scope, receive, send_with_id)
                    return
                receive = _replay(body)
            await self.app(scope, receive, send_with_id)
        finally:
            path = scope.get("path", "")
            route = route_label(path)
            seconds = time.perf_counter() - started
            self.telemetry.requests.labels(route, str(status["code"])).inc()
            self.telemetry.latency.labels(route).observe(seconds)
            if self.settings.access_log:
                access_log.info(
                    json.dumps(
                        {
                            "at": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
                            "request_id": request_id,
                            "method": scope.get("method"),
                            "path": path,
                            "status": status["code"],
                            "ms": round(seconds * 1000, 3),
                        }
                    )
                )


def _keep_body(send: Send, cache: ResultCache[bytes], key: tuple[object, ...]) -> Send:
    """Pass a response on, and cache its body when it is a complete 200."""
    state: dict[str, Any] = {"ok": False, "chunks": []}

    async def send_and_keep(message: Message) -> None:
        if message["type"] == "http.response.start":
            state["ok"] = message["status"] == 200
        elif message["type"] == "http.response.body" and state["ok"]:
            state["chunks"].append(message.get("body", b""))
            if not message.get("more_body"):
                cache.put(key, b"".join(state["chunks"]))
        await send(message)

    return send_and_keep


def _request_id(scope: Scope) -> str:
    for name, value in scope.get("headers", []):
        if name == b"x-request-id":
            text = str(value.decode("latin-1"))
            if 0 < len(text) <= 128 and text.isascii() and text.isprintable():
                return text
            break
    return uuid.uuid4().hex


async def _read_limited(receive: Receive, limit: int) -> bytes | None:
    chunks, size = [], 0
    while True:
        message = await receive()
        if message["type"] == "http.disconnect":
            break
        chunk = message.get("body", b"")
        size += len(chunk)
        if size > limit:
            return None
        chunks.append(chunk)
        if not message.get("more_body"):
            break
    return b"".join(chunks)


def _replay(body: bytes) -> Receive:
    sent = False

    async def receive() -> Message:
        nonlocal sent
        if not sent:
            sent = True
            return {"type": "http.request", "body": body, "more_body": False}
        return {"type": "http.disconnect"}

    return receive


# -- the app -----------------------------------------------------------------------------


def _field(loc: Any) -> str | None:
    parts = [str(p) for p in loc]
    if parts and parts[0] in ("body", "query", "path", "header"):
        parts = parts[1:]  # where it was, not which field
    return ".".join(parts) or None


def create_app(settings: Settings, holder: ModelHolder | None = None, watch: bool = True) -> FastAPI:
    """Build the service. `holder` defaults to one over `settings.store`; `watch` starts its watcher."""
    telemetry = Telemetry()
    if holder is None:
        holder = ModelHolder(Store(settings.store), on_event=telemetry.event)
    else:
        holder.on_event = telemetry.event
    # The service caches the response bytes: a hit costs a dict lookup, no model and no JSON work.
    cache: ResultCache[bytes] = ResultCache(settings.cache_size)
    defaults = ExpansionOptions(max_tokens=settings.max_query_tokens)

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        if watch:
            holder.start(settings.poll_seconds, settings.decisions_poll_seconds)
        else:
            holder.check()
            holder.check_decisions()
        if holder.serving is not None:
            telemetry.event("loaded", holder.serving.version)
        yield
        holder.stop()

    app = FastAPI(
        title="widen",
        version="1",
        summary="Query expansion for job-posting search: a seeker's phrase becomes boosted neighbour phrases.",
        lifespan=lifespan,
    )
    app.state.holder = holder
    app.state.telemetry = telemetry
    app.state.cache = cache

    @app.exception_handler(ApiError)
    async def _api_error(request: Request, exc: ApiError) -> JSONResponse:
        return _error(exc.status, exc.code, exc.message, exc.field)

    @app.exception_handler(RequestValidationError)
    async def _invalid(request: Request, exc: RequestValidationError) -> JSONResponse:
        first = exc.errors()[0] if exc.errors() else {"type": "invalid", "msg": "invalid request", "loc": ()}
        kind = str(first.get("type", ""))
        if kind == "json_invalid":
            return _error(400, "invalid_json", "the body is not valid JSON")
        return _error(400, "invalid_request", str(first.get("msg", "invalid request")), _field(first.get("loc", ())))

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException) -> JSONResponse:
        if exc.status_code == 400:  # the framework could not read the body at all (not UTF-8)
            return _error(400, "invalid_body", "the body is not valid JSON in UTF-8")
        code = {404: "not_found", 405: "method_not_allowed"}.get(exc.status_code, "http_error")
        return _error(exc.status_code, code, str(exc.detail), None, getattr(exc, "headers", None))

    @app.exception_handler(Exception)
    async def _unexpected(request: Request, exc: Exception) -> JSONResponse:
        logging.getLogger("widen.serve").exception("unexpected error")
        return _error(500, "internal", "unexpected error; the request id is in the response headers")

    def _options(body: _Options) -> ExpansionOptions:
        update: dict[str, Any] = {"explain": body.explain}
        if body.max is not None:
            update["max_per_segment"] = body.max
        if body.min_similarity is not None:
            update["min_similarity"] = body.min_similarity
        if body.original_boost is not None:
            update["original_boost"] = body.original_boost
        if body.operator is not None:
            update["operator"] = body.operator
        return defaults.model_copy(update=update)

    def _check_query(query: str, field: str) -> None:
        if not query.strip():
            raise ApiError(400, "empty_query", "the query is empty", field)
        if len(query) > settings.max_query_chars:
            raise ApiError(400, "query_too_long", f"the query is over {settings.max_query_chars} characters", field)
        count = len(tokens(query))
        if count == 0:
            raise ApiError(400, "empty_query", "the query has no words", field)
        if count > settings.max_query_tokens:
            raise ApiError(400, "query_too_long", f"the query is over {settings.max_query_tokens} words", field)

    def _expand(query: str, body: _Options, field: str) -> ExpansionResult:
        serving = holder.serving  # taken once: a swap never changes the bundle under this request
        if serving is None:
            raise ApiError(503, "not_ready", holder.not_ready_reason)
        _check_query(query, field)
        return expand(serving.lexicon, holder.decisions, query, _options(body))

    def _cached(query: str, body: _Options, field: str, edge_caches: bool = False) -> Response:
        if edge_caches:  # the edge missed this key a moment ago and will keep the response itself
            return _json(_expand(query, body, field))
        serving, decisions = holder.serving, holder.decisions
        key = (
            serving.version if serving else None,
            decisions.version,
            query,
            body.max,
            body.min_similarity,
            body.explain,
            body.original_boost,
            body.operator,
        )
        found = cache.get(key)
        if found is None:
            telemetry.cache_misses.inc()
            found = _expand(query, body, field).model_dump_json().encode()
            cache.put(key, found)
        else:
            telemetry.cache_hits.inc()
        return Response(found, media_type="application/json")

    def _json(model: BaseModel) -> Response:
        return Response(model.model_dump_json(), media_type="application/json")

    @app.get("/v1/expand", response_model=ExpansionResult, responses=ERRORS, tags=["expand"])
    async def expand_get(
        request: Request,
        q: str = Query(min_length=1, max_length=256, description="the seeker's query"),
        max: int | None = Query(default=None, ge=1, le=50),
        min_similarity: float | None = Query(default=None, ge=0.0, le=1.0),
        explain: bool = False,
        original_boost: float | None = Query(default=None, gt=0.0, le=100.0),
        operator: Literal["AND", "OR"] | None = None,
    ) -> Response:
        """Expand one query; the result model is the same as the CLI's JSON."""
        body = _Options.model_construct(
            max=max, min_similarity=min_similarity, explain=explain, original_boost=original_boost, operator=operator
        )
        return _cached(q, body, "q", bool(request.scope.get("widen.edge_caches")))

    @app.post("/v1/expand", response_model=ExpansionResult, responses=ERRORS, tags=["expand"])
    async def expand_post(body: ExpandRequest) -> Response:
        return _cached(body.query, body, "query")

    @app.post("/v1/expand/batch", response_model=BatchResponse, responses=ERRORS, tags=["expand"])
    async def expand_batch(body: BatchRequest) -> Response:
        if len(body.queries) > settings.max_batch:
            raise ApiError(400, "batch_too_large", f"at most {settings.max_batch} queries a batch", "queries")
        results = [_expand(q, body, f"queries.{n}") for n, q in enumerate(body.queries)]
        return _json(BatchResponse(results=results))

    @app.get("/v1/model", response_model=ModelResponse, responses=ERRORS, tags=["model"])
    async def model() -> ModelResponse:
        serving = holder.serving
        if serving is None:
            raise ApiError(503, "not_ready", holder.not_ready_reason)
        m = serving.lexicon.bundle.manifest
        corpus = {k: m["corpus"].get(k) for k in ("sha256", "postings_read", "postings_used", "duplicates", "skipped")}
        gate = {k: m["gate"].get(k) for k in ("passed", "score", "current_score", "forced")}
        return ModelResponse(
            version=m["version"],
            created_at=m["created_at"],
            vocabulary_size=m["vocabulary_size"],
            phrase_count=m["phrase_count"],
            corpus=corpus,
            gate=gate,
        )

    @app.get("/healthz", response_model=Status, tags=["operations"])
    async def healthz() -> Status:
        """The process is alive."""
        return Status(status="alive")

    @app.get("/readyz", response_model=Status, responses=ERRORS, tags=["operations"])
    async def readyz() -> Status:
        """200 only while a verified bundle serves."""
        serving = holder.serving
        if serving is None:
            raise ApiError(503, "not_ready", holder.not_ready_reason)
        return Status(status="ready", version=serving.version)

    @app.get(
        "/metrics",
        tags=["operations"],
        response_class=Response,
        responses={200: {"content": {CONTENT_TYPE_LATEST: {}}}},
    )
    async def metrics() -> Response:
        """Prometheus text exposition."""
        return Response(generate_latest(telemetry.registry), media_type=CONTENT_TYPE_LATEST)

    def _bearer(request: Request, token: str, what: str) -> None:
        """401 without a bearer token, 403 with a wrong one; compared in constant time."""
        header = request.headers.get("authorization", "")
        if not header.startswith("Bearer ") or not header[7:]:
            article = "an" if what[0] in "aeiou" else "a"
            raise ApiError(401, "unauthorized", f"{article} {what} token is required: Authorization: Bearer <token>")
        if not hmac.compare_digest(header[7:].encode(), token.encode()):
            raise ApiError(403, "forbidden", f"the {what} token is wrong")

    def _admin(request: Request) -> None:
        token = settings.admin_token.get_secret_value() if settings.admin_token else ""
        if not token:
            raise ApiError(404, "not_found", "Not Found")
        _bearer(request, token, "admin")

    @app.post("/v1/admin/reload", response_model=ReloadResponse, responses=ERRORS, tags=["operations"])
    def reload(request: Request) -> ReloadResponse:
        """Check the store now instead of waiting for the next poll (admin token)."""
        _admin(request)
        result = holder.check()
        holder.check_decisions()
        return ReloadResponse(result=result, version=holder.serving.version if holder.serving else None)

    # -- reviewer decisions ------------------------------------------------------------

    decision_store = DecisionStore(Store(settings.store).decisions_path)
    review_token = settings.review_token.get_secret_value() if settings.review_token else ""

    def _reviewer(request: Request) -> None:
        if not review_token:
            raise ApiError(403, "review_disabled", "this service has no review token (WIDEN_REVIEW_TOKEN): read-only")
        _bearer(request, review_token, "review")

    @app.get("/v1/decisions", response_model=DecisionList, responses=ERRORS, tags=["decisions"])
    def decisions_list(
        phrase: str | None = Query(default=None, max_length=256, description="only decisions for this phrase"),
        action: Literal["block", "pin", "never"] | None = None,
        state: Literal["active", "withdrawn", "all"] = "active",
    ) -> DecisionList:
        """Reviewer decisions, oldest first; `state=all` includes the withdrawn ones."""
        from service.decisions import phrase_form

        rows = decision_store.entries(include_withdrawn=state != "active")
        if state == "withdrawn":
            rows = [d for d in rows if d.withdrawn_at is not None]
        if phrase is not None:
            rows = [d for d in rows if d.phrase == phrase_form(phrase)]
        if action is not None:
            rows = [d for d in rows if d.action == action]
        return DecisionList(decisions=rows)

    @app.post("/v1/decisions", status_code=201, response_model=Decision, responses=ERRORS, tags=["decisions"])
    def decisions_add(request: Request, body: DecisionRequest) -> Decision:
        """Block or pin a neighbour for a phrase, or never expand it (review token). In force in
        this worker at once and in every worker within a second."""
        _reviewer(request)
        try:
            made = decision_store.add(body.phrase, body.action, body.reviewer, body.neighbour, body.weight, body.note)
        except DecisionError as exc:
            raise ApiError(400, "invalid_decision", str(exc)) from exc
        holder.check_decisions()
        return made

    @app.get("/v1/decisions/export", response_model=DecisionExport, tags=["decisions"])
    def decisions_export() -> DecisionExport:
        """The decisions in force, as JSON another store can import."""
        return DecisionExport(**decision_store.export())

    @app.post("/v1/decisions/import", response_model=ImportResponse, responses=ERRORS, tags=["decisions"])
    def decisions_import(
        request: Request,
        body: DecisionExport,
        reviewer: str = Query(min_length=1, max_length=100, description="who imports (recorded on each)"),
    ) -> ImportResponse:
        """Add every decision of an export, or none when one is invalid (review token)."""
        _reviewer(request)
        try:
            added = decision_store.import_(body.model_dump(), reviewer)
        except DecisionError as exc:
            raise ApiError(400, "invalid_decision", str(exc)) from exc
        holder.check_decisions()
        return ImportResponse(added=added)

    @app.delete("/v1/decisions/{decision_id}", response_model=Decision, responses=ERRORS, tags=["decisions"])
    def decisions_withdraw(
        request: Request,
        decision_id: int = PathParam(ge=1, le=MAX_ID),
        reviewer: str = Query(min_length=1, max_length=100, description="who undoes it"),
        note: str | None = Query(default=None, max_length=1000),
    ) -> Decision:
        """Undo a decision: it stops applying and stays in the audit trail (review token)."""
        _reviewer(request)
        try:
            withdrawn = decision_store.withdraw(decision_id, reviewer, note)
        except DecisionMissing as exc:
            raise ApiError(404, "not_found", str(exc)) from exc
        except DecisionWithdrawn as exc:
            raise ApiError(409, "already_withdrawn", str(exc)) from exc
        except DecisionError as exc:
            raise ApiError(400, "invalid_decision", str(exc)) from exc
        holder.check_decisions()
        return withdrawn

    # -- pages -------------------------------------------------------------------------

    from service.review import add_review_routes
    from service.search_index import SearchIndex

    demo_index = None
    if settings.demo_index is not None:
        from service.demo_page import add_demo_routes

        demo_index = SearchIndex(settings.demo_index, settings.store / "search-index")
        add_demo_routes(app, demo_index)
    opened: dict[str, SearchIndex] = {}

    def preview_index() -> SearchIndex | None:
        """The demo index, else the newest index `widen evaluate` built in the store."""
        if demo_index is not None:
            return demo_index
        path = SearchIndex.newest_built(settings.store / "search-index")
        if path is None:
            return None
        if str(path) not in opened:
            opened.clear()
            opened[str(path)] = SearchIndex.open_built(path)
        return opened[str(path)]

    add_review_routes(app, settings, holder, defaults, preview_index)

    if settings.cors_origins:
        app.add_middleware(
            CORSMiddleware,
            allow_origins=settings.cors_origins,
            allow_methods=["GET", "POST", "DELETE"],
            allow_headers=["Authorization", "Content-Type", "X-Request-ID"],
            expose_headers=["X-Request-ID"],
        )
    app.add_middleware(Edge, settings=settings, telemetry=telemetry, holder=holder, cache=cache)  # type: ignore[arg-type]
    return app


def _configure_logging() -> None:
    if not access_log.handlers:
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(logging.Formatter("%(message)s"))
        access_log.addHandler(handler)
        access_log.setLevel(logging.INFO)
        access_log.propagate = False


def app_from_environment() -> FastAPI:
    """The factory uvicorn's workers call: settings from WIDEN_* variables."""
    _configure_logging()
    logging.basicConfig(level=logging.INFO, format="%(levelname)s %(name)s: %(message)s")
    logging.getLogger("gensim").setLevel(logging.WARNING)
    return create_app(Settings())
