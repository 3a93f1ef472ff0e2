"""What gunicorn's parent loads before forking, so that the workers share it instead of each loading it.

A module a worker imports after the fork is made in that worker's own memory; one the parent imported
is shared by every worker. `preimport` imports, in the parent, every module the worker class would
import on starting (the event loop, the HTTP parser and uvicorn's server); `SharedUvicornWorker` is
uvicorn's worker with no WebSocket protocol (the service has no WebSocket route, so nothing of it is
loaded at all).
"""

from __future__ import annotations

import importlib
from typing import Any, ClassVar

from uvicorn_worker import UvicornWorker

__all__ = ["SharedUvicornWorker", "preimport", "PREIMPORTED"]

#: The modules a worker imports on starting (uvicorn's choice for "auto": uvloop, httptools).
PREIMPORTED = (
    "uvloop",
    "uvicorn.loops.auto",
    "uvicorn.loops.uvloop",
    "httptools",
    "uvicorn.protocols.http.auto",
    "uvicorn.protocols.http.httptools_impl",
    "uvicorn.lifespan.on",
    "uvicorn.server",
)


class SharedUvicornWorker(UvicornWorker):  # type: ignore[misc]
    CONFIG_KWARGS: ClassVar[dict[str, Any]] = {"loop": "auto", "http": "auto", "ws": "none"}


def preimport() -> None:
    """Import, in the parent, what every worker would otherwise import for itself after the fork."""
    for name in PREIMPORTED:
        importlib.import_module(name)
