"""Starting the HTTP service: `widen serve` turns its flags into settings and hands the process to uvicorn."""

from __future__ import annotations

import os
import sys
from pathlib import Path

from service.settings import Settings
from widen.errors import EXIT_OK, BadInput

__all__ = ["serve"]


def serve(
    store: Path | None = None,
    host: str | None = None,
    port: int | None = None,
    workers: int | None = None,
    demo_index: Path | None = None,
) -> int:
    """Serve a store over HTTP; flags given here win over WIDEN_* variables. Does not return."""
    # Flags become WIDEN_* variables so that every worker process reads the same settings.
    for name, value in (("STORE", store), ("HOST", host), ("PORT", port), ("WORKERS", workers)):
        if value is not None:
            os.environ[f"WIDEN_{name}"] = str(value.resolve() if isinstance(value, Path) else value)
    if demo_index is not None:
        os.environ["WIDEN_DEMO_INDEX"] = str(demo_index.resolve())
    settings = Settings()
    if not settings.store.is_dir():
        raise BadInput(f"no store at {settings.store} (train one first: widen train --corpus ... --store ...)")
    base = f"http://{settings.host}:{settings.port}"
    print(f"widen serving {settings.store} with {settings.workers} worker(s)")
    print(f"  API           {base}/v1/expand?q=lorry+driver")
    print(f"  OpenAPI       {base}/openapi.json  (browsable at {base}/docs)")
    print(f"  health        {base}/healthz  {base}/readyz  {base}/metrics")
    mode = "decisions need WIDEN_REVIEW_TOKEN" if settings.review_token is None else "review token set"
    print(f"  review        {base}/debug?q=lorry+driver  ({mode})")
    if settings.demo_index is not None:
        print(f"  demo search   {base}/demo")
    sys.stdout.flush()
    # Hand the process over to uvicorn: with several workers its supervisor then holds none of
    # widen's libraries, only the workers do (each loads the app from WIDEN_* variables).
    command = [sys.executable, "-m", "uvicorn", "service.app:app_from_environment", "--factory"]
    command += ["--host", settings.host, "--port", str(settings.port), "--workers", str(settings.workers)]
    command += ["--log-level", "warning", "--no-access-log"]
    os.execv(sys.executable, command)
    return EXIT_OK  # pragma: no cover - execv does not return
