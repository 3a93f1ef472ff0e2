"""End to end: the real `widen serve` process on a free port, over HTTP."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import httpx


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_widen_serve_answers_over_http(trained_store: Path) -> None:
    port = _free_port()
    env = dict(os.environ, WIDEN_ADMIN_TOKEN="tollbridge-admin", WIDEN_POLL_SECONDS="0.2")
    proc = subprocess.Popen(
        [sys.executable, "-m", "service.cli", "serve", "--store", str(trained_store), "--port", str(port)],
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline:
            try:
                if httpx.get(f"{base}/readyz", timeout=1).status_code == 200:
                    break
            except httpx.TransportError:
                time.sleep(0.1)
        else:
            raise AssertionError("server did not become ready")
        got = httpx.get(f"{base}/v1/expand", params={"q": "lorry driver"}, headers={"X-Request-ID": "e2e-1"})
        assert got.status_code == 200 and got.headers["x-request-id"] == "e2e-1"
        assert "hgv driver" in got.json()["query_text"]
        assert httpx.get(f"{base}/v1/expand", params={"q": ""}).status_code == 400
        assert httpx.get(f"{base}/openapi.json").json()["info"]["title"] == "widen"
        reload = httpx.post(f"{base}/v1/admin/reload", headers={"Authorization": "Bearer tollbridge-admin"})
        assert reload.json()["result"] == "unchanged"
    finally:
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=20)
    # The access log is JSON lines, one a request, with the request id.
    lines = [line for line in err.splitlines() if line.startswith("{")]
    assert any('"request_id": "e2e-1"' in line and '"status": 200' in line for line in lines)
