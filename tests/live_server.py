"""A real `widen serve` process on a free port, for the end-to-end and browser tests."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import httpx


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@dataclass
class LiveServer:
    base: str
    process: subprocess.Popen[str]
    log: list[str]


@contextmanager
def live_server(
    store: Path | str,
    env: dict[str, str] | None = None,
    args: tuple[str, ...] = (),
    ready_within: float = 60,
    cwd: Path | None = None,
) -> Iterator[LiveServer]:
    """Start `widen serve` on `store` (a folder or a store's URL), wait until /readyz answers 200 (at
    most `ready_within` seconds), stop it with SIGINT after. `cwd`: the folder it runs in; `python -m`
    imports from there first, ahead of PYTHONPATH, so a bench serving another checkout runs in it."""
    port = free_port()
    process = subprocess.Popen(
        [sys.executable, "-m", "widen.cli", "serve", "--store", str(store), "--port", str(port), *args],
        env={**os.environ, "WIDEN_ACCESS_LOG": "false", **(env or {})},
        cwd=cwd,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    base = f"http://127.0.0.1:{port}"
    server = LiveServer(base, process, [])
    try:
        deadline = time.monotonic() + ready_within
        while time.monotonic() < deadline:
            if process.poll() is not None:
                _, err = process.communicate()
                raise AssertionError(f"widen serve exited with {process.returncode}: {err}")
            try:
                if httpx.get(f"{base}/readyz", timeout=1).status_code == 200:
                    break
            except httpx.TransportError:
                time.sleep(0.1)
        else:
            raise AssertionError(f"widen serve did not become ready in {ready_within:g} s")
        yield server
    finally:
        if process.poll() is None:
            process.send_signal(signal.SIGINT)
        try:
            _, err = process.communicate(timeout=20)
        except subprocess.TimeoutExpired:
            process.kill()
            _, err = process.communicate()
        server.log.extend(err.splitlines())


@contextmanager
def steady_load(bases: list[str], phrase: str, variants: int) -> Iterator[list[int]]:
    """GET /v1/expand on every server in `bases` in a loop on a thread ("PHRASE 0", "PHRASE 1", ...,
    `variants` spellings, so the response cache does not answer them all) until the block ends;
    yields the status codes of the answers that were not 200 (the caller asserts it stays empty)."""
    failures: list[int] = []
    done = threading.Event()

    def load() -> None:
        n = 0
        while not done.is_set():
            for base in bases:
                got = httpx.get(f"{base}/v1/expand", params={"q": f"{phrase} {n % variants}"}, timeout=10)
                if got.status_code != 200:
                    failures.append(got.status_code)
            n += 1

    loader = threading.Thread(target=load)
    loader.start()
    try:
        yield failures
    finally:
        done.set()
        loader.join(timeout=30)
