"""The expansion service: FastAPI on uvicorn, a thin shell over the expansion core.

`create_app(settings, state)` composes the service in one visible place: one state object,
one router per concern (expansion, decisions, operations, review, demo), the one error shape,
and plain ASGI middleware, one job each (`service.middleware`). Tests build the app with their
own settings and state.
"""

from __future__ import annotations

import gc
import logging
import os
import sys
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager

from fastapi import FastAPI
from fastapi.middleware.cors import CORSMiddleware

from service.errors import install_error_handlers
from service.middleware.access_record import AccessRecord, access_log
from service.middleware.body_limit import BodyLimit
from service.middleware.expand_shortcut import PATH, ExpandShortcut
from service.middleware.request_id import RequestId
from service.review.routes import router as review_router
from service.routes import concepts, decisions, demo, expansion, operations, worklist
from service.settings import Settings
from service.state import ServiceState

__all__ = ["create_app", "app_from_environment", "preloaded_app"]


def create_app(settings: Settings, state: ServiceState | None = None, watch: bool = True) -> FastAPI:
    """Build the service. `state` defaults to one over `settings`; `watch` polls the store for changes."""
    state = state if state is not None else ServiceState(settings)

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        state.start(watch=watch)
        if state.serving is not None:  # loaded before the app existed: say so in this app's metrics
            state.telemetry.serving(state.serving.version)
        yield
        state.stop()

    app = FastAPI(
        title="widen",
        version="1",
        summary="Query expansion for job-posting search: a seeker's phrase becomes boosted neighbour phrases.",
        lifespan=lifespan,
    )
    app.state.widen = state
    install_error_handlers(app)
    for router in (
        expansion.router,
        concepts.router,
        decisions.router,
        worklist.router,
        operations.router,
        review_router,
    ):
        app.include_router(router)
    if state.demo_index is not None:
        app.include_router(demo.router)
    if settings.cors_origins:
        app.add_middleware(
            CORSMiddleware,
            allow_origins=settings.cors_origins,
            allow_methods=["GET", "POST", "DELETE"],
            allow_headers=["Authorization", "Content-Type", "X-Request-ID"],
            expose_headers=["X-Request-ID"],
        )
    # Outermost last: the request id, then the access record, the body limit, the GET shortcut.
    expand_get = next(r for r in expansion.router.routes if getattr(r, "path", "") == PATH and "GET" in r.methods)  # type: ignore[attr-defined]
    app.add_middleware(ExpandShortcut, state=state, route=expand_get)  # type: ignore[arg-type]
    tagging = {"/v1/concept-tokens": settings.max_tag_body_bytes}  # a batch of postings, descriptions and all
    app.add_middleware(BodyLimit, limit=settings.max_body_bytes, by_path=tagging)  # type: ignore[arg-type]
    app.add_middleware(AccessRecord, telemetry=state.telemetry, log=settings.access_log)  # type: ignore[arg-type]
    app.add_middleware(RequestId)  # type: ignore[arg-type]
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


def preloaded_app() -> FastAPI:
    """For a process manager that forks its workers from a parent that loaded the app (`widen serve
    --workers N`): the app with the serving bundle and the decisions already loaded, and every object
    made so far moved out of the garbage collector's reach with `gc.freeze()`. Python's documentation
    of gc.freeze describes this use: disable the collector early in the parent, freeze right before
    forking, enable it again early in each child (`service.launch` does that after the fork), so the
    children's collections never write to the pages they share with the parent. The bundle's arrays
    are memory-mapped files, shared whatever the collector does. Each worker still starts its own
    watcher threads, metrics and response cache in the app's lifespan, after the fork."""
    gc.disable()
    app = app_from_environment()
    state: ServiceState = app.state.widen
    state.check()
    state.check_decisions()
    if state.telemetry.shared:  # the parent serves no request: its live gauges must not count
        from prometheus_client import multiprocess

        multiprocess.mark_process_dead(os.getpid())  # type: ignore[no-untyped-call]
    gc.collect()
    gc.freeze()
    return app
