"""`make drill`: two replicas behind a real load balancer; one is killed and restarted, and a new
bundle is published, under load.

Debian's nginx on loopback balances two `widen serve` replicas that read their bundles from a store
URL (Python's http.server serving the store folder), retrying an idempotent GET on the other
replica when one fails (`proxy_next_upstream error timeout http_502 http_503`). wrk replays the
day's query log through nginx in three phases: `before`; `during`, in which replica A is killed
with SIGKILL, a new bundle is published, and A is started again; and `after`. A client beside wrk
checks that every answer is whole JSON from one of the two bundles. Reported: requests, failed
requests (non-2xx and socket errors), p50/p99/max per phase, and when each event happened; the
`after` phase starts only once both replicas serve the new bundle (within 30 s, or the drill fails).

    python -m bench.drill --demo build/demo --out build/drill [--seconds 10]
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import httpx

from bench.common import ROOT, machine
from bench.traffic import log_paths, replay_loop
from tests.live_server import free_port
from widen.clock import new_version
from widen.model.store import Store

__all__ = ["run_drill", "main"]

_NGINX = """
worker_processes 1;
pid {root}/nginx.pid;
error_log {root}/error.log warn;
events {{ worker_connections 1024; }}
http {{
    access_log off;
    client_body_temp_path {root}/body;
    proxy_temp_path {root}/proxy;
    fastcgi_temp_path {root}/fastcgi;
    uwsgi_temp_path {root}/uwsgi;
    scgi_temp_path {root}/scgi;
    upstream widen {{
        server 127.0.0.1:{a} max_fails=1 fail_timeout=2s;
        server 127.0.0.1:{b} max_fails=1 fail_timeout=2s;
        keepalive 32;
    }}
    server {{
        listen 127.0.0.1:{port};
        location / {{
            proxy_pass http://widen;
            proxy_http_version 1.1;
            proxy_set_header Connection "";
            proxy_connect_timeout 1s;
            proxy_read_timeout 10s;
            proxy_next_upstream error timeout http_502 http_503;
            proxy_next_upstream_tries 2;
        }}
    }}
}}
"""


def _wait(url: str, seconds: float = 60) -> None:
    deadline = time.monotonic() + seconds
    while True:
        try:
            if httpx.get(url, timeout=1).status_code == 200:
                return
        except httpx.TransportError:
            pass
        if time.monotonic() > deadline:
            raise RuntimeError(f"{url} did not answer 200 in {seconds} s")
        time.sleep(0.1)


def _replica(store_url: str, port: int, mirror: Path) -> subprocess.Popen[bytes]:
    env = {**os.environ, "WIDEN_ACCESS_LOG": "false", "WIDEN_POLL_SECONDS": "1", "WIDEN_MIRROR": str(mirror)}
    return subprocess.Popen(
        [sys.executable, "-m", "widen.cli", "serve", "--store", store_url, "--port", str(port)],
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        cwd=ROOT,
    )


@contextmanager
def _running(command: list[str], cwd: Path | None = None) -> Iterator[subprocess.Popen[bytes]]:
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=cwd)
    try:
        yield process
    finally:
        if process.poll() is None:
            process.terminate()
            process.wait(timeout=20)


def _publish(store: Path) -> str:
    """A new bundle as the trainer publishes one: the files first, the pointer last."""
    s = Store(store)
    current = s.current_version() or ""
    version = new_version(current)
    shutil.copytree(s.bundle_dir(current), s.bundle_dir(version))
    manifest_path = s.bundle_dir(version) / "manifest.json"
    manifest = json.loads(manifest_path.read_text(encoding="utf-8"))
    manifest["version"] = version
    manifest_path.write_text(json.dumps(manifest), encoding="utf-8")
    s.set_current(version, by="drill")
    return version


class _Checker:
    """Beside the load: asks one query again and again through the balancer and notes each answer's
    bundle, or the failure, so a half-loaded or broken answer cannot hide in wrk's counts."""

    def __init__(self, base: str) -> None:
        self.base = base
        self.seen: dict[str, int] = {}
        self.broken: list[str] = []
        self.stop = threading.Event()
        self.thread = threading.Thread(target=self._run)

    def _run(self) -> None:
        while not self.stop.is_set():
            try:
                got = httpx.get(f"{self.base}/v1/expand", params={"q": "care assistant"}, timeout=10)
                version = got.json()["model"]["version"]
                self.seen[version] = self.seen.get(version, 0) + 1
            except (httpx.HTTPError, ValueError, KeyError) as exc:
                self.broken.append(type(exc).__name__)


def _until_serving(port: int, version: str, name: str, seconds: float = 30.0) -> None:
    deadline = time.monotonic() + seconds
    while True:
        try:
            if httpx.get(f"http://127.0.0.1:{port}/v1/model", timeout=1).json()["version"] == version:
                return
        except (httpx.HTTPError, ValueError, KeyError):
            pass
        if time.monotonic() > deadline:
            raise RuntimeError(f"replica {name} never served {version}")
        time.sleep(0.1)


@dataclass
class _Drill:
    """The running parts: the published store and its URL, the replicas and their ports, the balancer."""

    published: Path
    store_url: str
    base: str
    ports: dict[str, int]
    work: Path
    replicas: dict[str, subprocess.Popen[bytes]]

    def disrupt(self, seconds: float, events: dict[str, Any]) -> None:
        """Kill replica A, publish a new bundle, start A again, each a fifth of `seconds` apart."""
        started = time.monotonic()
        time.sleep(seconds * 0.2)
        self.replicas["a"].send_signal(signal.SIGKILL)
        events["killed_a_s"] = round(time.monotonic() - started, 2)
        time.sleep(seconds * 0.2)
        events["new_bundle"] = _publish(self.published)
        events["published_s"] = round(time.monotonic() - started, 2)
        time.sleep(seconds * 0.2)
        self.replicas["a"] = _replica(self.store_url, self.ports["a"], self.work / "mirror-a")
        events["restarted_a_s"] = round(time.monotonic() - started, 2)

    def phases(self, seconds: float, paths: Path, old: str | None) -> dict[str, Any]:
        """Before, during (the disruption) and after, each under wrk's load, with the checker beside it."""
        results: dict[str, Any] = {}
        checker = _Checker(self.base)
        checker.thread.start()
        results["before"] = replay_loop(self.base, seconds, paths)
        events: dict[str, Any] = {}
        disrupter = threading.Thread(target=self.disrupt, args=(seconds, events))
        disrupter.start()
        during = replay_loop(self.base, seconds * 1.5, paths)
        disrupter.join()
        results["during"] = {**during, **events}
        new = str(events["new_bundle"])
        for name, port in self.ports.items():
            _until_serving(port, new, name)
        results["after"] = replay_loop(self.base, seconds, paths)
        checker.stop.set()
        checker.thread.join(timeout=30)
        results["answers_by_bundle"] = checker.seen
        results["bundles"] = {"old": old, "new": new}
        others = sum(n for v, n in checker.seen.items() if v not in (old, new))
        results["half_loaded_or_broken_answers"] = len(checker.broken) + others
        return results


def run_drill(store: Path, demo: Path, work: Path, seconds: float = 10.0) -> dict[str, Any]:
    """The drill on a copy of `store`; `seconds` per phase."""
    nginx = shutil.which("nginx") or "/usr/sbin/nginx"
    if not Path(nginx).exists() or shutil.which("wrk") is None:
        raise RuntimeError("the drill needs nginx and wrk (apt-get install nginx-light wrk)")
    published = work / "published"
    shutil.copytree(store, published, ignore=shutil.ignore_patterns("decisions.sqlite*", "search-index", ".lock"))
    old = Store(published).current_version()
    paths, _, _ = log_paths(demo / "query_log.jsonl", work / "drill-paths.txt")
    static_port, a_port, b_port, lb_port = (free_port() for _ in range(4))
    root = Path(tempfile.mkdtemp(prefix="widen-drill-nginx-"))
    (root / "nginx.conf").write_text(_NGINX.format(root=root, a=a_port, b=b_port, port=lb_port), encoding="utf-8")
    store_url = f"http://127.0.0.1:{static_port}"
    static = [
        sys.executable,
        "-m",
        "http.server",
        str(static_port),
        "--bind",
        "127.0.0.1",
        "--directory",
        str(published),
    ]
    results: dict[str, Any] = {}
    with _running(static):
        _wait(f"{store_url}/CURRENT")
        replicas = {
            "a": _replica(store_url, a_port, work / "mirror-a"),
            "b": _replica(store_url, b_port, work / "mirror-b"),
        }
        drill = _Drill(published, store_url, f"http://127.0.0.1:{lb_port}", {"a": a_port, "b": b_port}, work, replicas)
        try:
            for port in (a_port, b_port):
                _wait(f"http://127.0.0.1:{port}/readyz")
            with _running([nginx, "-c", str(root / "nginx.conf"), "-g", "daemon off;"]):
                _wait(f"{drill.base}/healthz")
                results.update(drill.phases(seconds, paths, old))
        finally:
            log = root / "error.log"
            if log.exists():  # what nginx saw go wrong upstream (it retried those it could)
                results["nginx_upstream_errors"] = [x for x in log.read_text().splitlines() if "upstream" in x][-8:]
            for process in drill.replicas.values():
                if process.poll() is None:
                    process.terminate()
                    process.wait(timeout=20)
            shutil.rmtree(root, ignore_errors=True)
    results["failed_total"] = sum(results[p]["failed"] for p in ("before", "during", "after"))
    results["requests_total"] = sum(results[p]["requests"] for p in ("before", "during", "after"))
    return results


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--demo", type=Path, default=ROOT / "build" / "demo")
    parser.add_argument("--store", type=Path, default=ROOT / "build" / "store")
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "drill")
    parser.add_argument("--seconds", type=float, default=10.0)
    args = parser.parse_args()
    out = args.out.resolve()
    shutil.rmtree(out, ignore_errors=True)
    out.mkdir(parents=True)
    results = {"machine": machine(), "date": time.strftime("%Y-%m-%d")}
    results.update(run_drill(args.store.resolve(), args.demo.resolve(), out, args.seconds))
    (out / "drill.json").write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(results, indent=2))


if __name__ == "__main__":
    main()
