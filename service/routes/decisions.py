"""`/v1/decisions`: read reviewer decisions, and with the review token record, withdraw, export, import."""

from __future__ import annotations

from typing import Literal

from fastapi import APIRouter, Query, Request
from fastapi import Path as PathParam

from service.auth import require_reviewer
from service.errors import ERRORS, ApiError
from service.routes import State
from service.wire import DecisionExport, DecisionList, DecisionRequest, ImportResponse
from widen.decisions.decision import MAX_ID, Decision
from widen.errors import DecisionError, DecisionMissing, DecisionWithdrawn
from widen.text.forms import phrase_of_text

__all__ = ["router"]

router = APIRouter(tags=["decisions"])

# These handlers are plain functions: FastAPI runs them in its thread pool, so a write that waits
# for the database's lock never holds up /v1/expand on the event loop.


@router.get("/v1/decisions", response_model=DecisionList, responses=ERRORS)
def decisions_list(
    state: State,
    phrase: str | None = Query(default=None, max_length=256, description="only decisions for this phrase"),
    action: Literal["block", "pin", "exempt", "looked"] | None = None,
    state_: Literal["active", "withdrawn", "all"] = Query(default="active", alias="state"),
) -> DecisionList:
    """Reviewer decisions, oldest first; `state=all` includes the withdrawn ones."""
    rows = state.decision_store.entries(include_withdrawn=state_ != "active")
    if state_ == "withdrawn":
        rows = [d for d in rows if d.withdrawn_at is not None]
    if phrase is not None:
        rows = [d for d in rows if d.phrase == phrase_of_text(phrase)]
    if action is not None:
        rows = [d for d in rows if d.action == action]
    return DecisionList(decisions=rows)


@router.post("/v1/decisions", status_code=201, response_model=Decision, responses=ERRORS)
def decisions_add(request: Request, body: DecisionRequest, state: State) -> Decision:
    """Block or pin a neighbour for a phrase, or exempt a phrase from expansion (review token). In
    force in this worker at once and in every worker within a second."""
    require_reviewer(request, state)
    try:
        made = state.decision_store.add(body.phrase, body.action, body.reviewer, body.neighbour, body.weight, body.note)
    except DecisionError as exc:
        raise ApiError(400, "invalid_decision", str(exc)) from exc
    state.check_decisions()
    return made


@router.get("/v1/decisions/export", response_model=DecisionExport)
def decisions_export(state: State) -> DecisionExport:
    """The decisions in force, as JSON another store can import."""
    return DecisionExport(**state.decision_store.export())


@router.post("/v1/decisions/import", response_model=ImportResponse, responses=ERRORS)
def decisions_import(
    request: Request,
    body: DecisionExport,
    state: State,
    reviewer: str = Query(min_length=1, max_length=100, description="who imports (recorded on each)"),
) -> ImportResponse:
    """Add every decision of an export, or none when one is invalid (review token)."""
    require_reviewer(request, state)
    try:
        added = state.decision_store.import_(body.model_dump(), reviewer)
    except DecisionError as exc:
        raise ApiError(400, "invalid_decision", str(exc)) from exc
    state.check_decisions()
    return ImportResponse(added=added)


@router.delete("/v1/decisions/{decision_id}", response_model=Decision, responses=ERRORS)
def decisions_withdraw(
    request: Request,
    state: State,
    decision_id: int = PathParam(ge=1, le=MAX_ID),
    reviewer: str = Query(min_length=1, max_length=100, description="who withdraws it"),
    note: str | None = Query(default=None, max_length=1000),
) -> Decision:
    """Withdraw a decision: it stops applying and stays in the audit trail (review token)."""
    require_reviewer(request, state)
    try:
        withdrawn = state.decision_store.withdraw(decision_id, reviewer, note)
    except DecisionMissing as exc:
        raise ApiError(404, "not_found", str(exc)) from exc
    except DecisionWithdrawn as exc:
        raise ApiError(409, "already_withdrawn", str(exc)) from exc
    except DecisionError as exc:
        raise ApiError(400, "invalid_decision", str(exc)) from exc
    state.check_decisions()
    return withdrawn
