"""Operations: liveness, readiness, metrics, the serving model, and a reload on demand."""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import Response
from prometheus_client.exposition import CONTENT_TYPE_LATEST

from service.auth import require_admin
from service.errors import ERRORS, ApiError
from service.routes import State
from service.wire import ModelResponse, ReloadResponse, Status

__all__ = ["router"]

router = APIRouter(tags=["operations"])


@router.get("/v1/model", response_model=ModelResponse, responses=ERRORS, tags=["model"])
async def model(state: State) -> ModelResponse:
    serving = state.serving
    if serving is None:
        raise ApiError(503, "not_ready", state.not_ready_reason)
    m = serving.lexicon.bundle.manifest
    told = m.corpus.model_dump() if m.corpus else {}
    corpus = {k: told.get(k) for k in ("sha256", "postings_read", "postings_used", "duplicates", "skipped")}
    judged = m.gate.model_dump() if m.gate else {}
    gate = {k: judged.get(k) for k in ("passed", "score", "current_score", "forced")}
    return ModelResponse(
        version=m.version,
        created_at=m.created_at,
        vocabulary_size=m.vocabulary_size,
        phrase_count=m.phrase_count,
        corpus=corpus,
        gate=gate,
    )


@router.get("/healthz", response_model=Status)
async def healthz() -> Status:
    """The process is alive."""
    return Status(status="alive")


@router.get("/readyz", response_model=Status, responses=ERRORS)
async def readyz(state: State) -> Status:
    """200 only while a verified bundle serves."""
    serving = state.serving
    if serving is None:
        raise ApiError(503, "not_ready", state.not_ready_reason)
    # Stale decisions do not make the service unready: it serves with the last ones it loaded.
    return Status(status="ready", version=serving.version, decisions=state.decisions_stale or "current")


@router.get("/metrics", response_class=Response, responses={200: {"content": {CONTENT_TYPE_LATEST: {}}}})
async def metrics(state: State) -> Response:
    """Prometheus text exposition."""
    return Response(state.telemetry.exposition(), media_type=CONTENT_TYPE_LATEST)


@router.post("/v1/admin/reload", response_model=ReloadResponse, responses=ERRORS)
def reload(request: Request, state: State) -> ReloadResponse:
    """Check the store now instead of waiting for the next poll (admin token)."""
    require_admin(request, state)
    result = state.check()
    state.check_decisions()
    return ReloadResponse(result=result, version=state.serving.version if state.serving else None)
