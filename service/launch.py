"""Starting the HTTP service: `widen serve` turns its flags into settings and hands the process over.

One worker: uvicorn alone. Several: gunicorn, a process manager that loads the app once in its
parent and forks the workers from it (`preload_app`), each running uvicorn's worker class
(uvicorn-worker, `service.forked`). The workers then share the parent's loaded libraries and bundle pages instead of
each loading its own copy; see `service.app.preloaded_app` for the garbage-collector part.
"""

from __future__ import annotations

import gc
import os
import shutil
import sys
import tempfile
from pathlib import Path
from typing import Any

from service.settings import Settings
from widen.errors import EXIT_OK, BadInput
from widen.model.remote_store import is_url, masked

__all__ = ["serve"]


def serve(
    store: str | Path | None = None,
    host: str | None = None,
    port: int | None = None,
    workers: int | None = None,
    demo_index: Path | None = None,
) -> int:
    """Serve a store over HTTP; flags given here win over WIDEN_* variables. Does not return."""
    # Flags become WIDEN_* variables so that every worker process reads the same settings.
    for name, value in (("STORE", store), ("HOST", host), ("PORT", port), ("WORKERS", workers)):
        if value is not None:
            if name == "STORE" and not is_url(str(value)):
                value = Path(str(value)).resolve()
            os.environ[f"WIDEN_{name}"] = str(value)
    if demo_index is not None:
        os.environ["WIDEN_DEMO_INDEX"] = str(demo_index.resolve())
    settings = Settings()
    if not is_url(settings.store) and not Path(settings.store).is_dir():
        raise BadInput(f"no store at {settings.store} (train one first: widen train --corpus ... --store ...)")
    base = f"http://{settings.host}:{settings.port}"
    print(f"widen serving {masked(str(settings.store))} with {settings.workers} worker(s)")
    print(f"  API           {base}/v1/expand?q=lorry+driver")
    print(f"  OpenAPI       {base}/openapi.json  (browsable at {base}/docs)")
    print(f"  health        {base}/healthz  {base}/readyz  {base}/metrics")
    mode = "decisions need WIDEN_REVIEW_TOKEN" if settings.review_token is None else "review token set"
    print(f"  review        {base}/review?q=lorry+driver  ({mode})")
    if settings.demo_index is not None:
        print(f"  demo search   {base}/demo")
    sys.stdout.flush()
    if settings.workers > 1:
        _preforked(settings)
        return EXIT_OK
    # One worker: hand the process over to uvicorn, which loads the app from WIDEN_* variables.
    command = [sys.executable, "-m", "uvicorn", "service.app:app_from_environment", "--factory"]
    command += ["--host", settings.host, "--port", str(settings.port)]
    command += ["--log-level", "warning", "--no-access-log"]
    os.execv(sys.executable, command)
    return EXIT_OK  # pragma: no cover - execv does not return


def _after_fork(server: Any, worker: Any) -> None:
    gc.enable()  # the parent disabled it while loading (service.app.preloaded_app)


def _worker_gone(server: Any, worker: Any) -> None:
    from prometheus_client import multiprocess

    multiprocess.mark_process_dead(worker.pid)  # type: ignore[no-untyped-call]  # live gauges drop it


def _metrics_dir() -> Path:
    """A fresh folder for the workers' shared metrics, set before prometheus-client is first used."""
    folder = Path(tempfile.mkdtemp(prefix="widen-metrics-"))
    os.environ["PROMETHEUS_MULTIPROC_DIR"] = str(folder)  # service.telemetry.MULTIPROCESS
    if "prometheus_client.values" in sys.modules:  # chosen at import: choose again, now shared
        import prometheus_client.values

        prometheus_client.values.ValueClass = prometheus_client.values.get_value_class()  # type: ignore[no-untyped-call]
    return folder


def _preforked(settings: Settings) -> None:
    """Run `settings.workers` uvicorn workers under gunicorn, forked from a parent that loaded the app."""
    from gunicorn.app.base import BaseApplication

    metrics = _metrics_dir()

    class Preforked(BaseApplication):  # type: ignore[misc]
        def load_config(self) -> None:
            for key, value in {
                "bind": f"{settings.host}:{settings.port}",
                "workers": settings.workers,
                "worker_class": "service.forked.SharedUvicornWorker",
                "preload_app": True,
                "post_fork": _after_fork,
                "child_exit": _worker_gone,
                "on_exit": lambda server: shutil.rmtree(metrics, ignore_errors=True),
                "loglevel": "warning",
                "accesslog": None,
                "graceful_timeout": 10,
                "timeout": 60,
                "proc_name": "widen",
            }.items():
                self.cfg.set(key, value)

        def load(self) -> Any:
            from service.app import preloaded_app
            from service.forked import preimport

            preimport()  # before the app: preloaded_app freezes every object made so far
            return preloaded_app()

    Preforked().run()
