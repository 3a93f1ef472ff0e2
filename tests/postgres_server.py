"""A throwaway PostgreSQL cluster for the tests: Debian's `postgresql` package, a temporary data
directory, a free port on 127.0.0.1, trust authentication for one user; stopped and removed after.

`.ci/run` installs the package. As root (CI), the server runs as the `postgres` user, which owns
the temporary directory. Where no server can be started the tests that need one skip with the
reason, except under CI=true, where they fail: a missing database must not pass unnoticed.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest

from tests.live_server import free_port

IN_CI = os.environ.get("CI", "").lower() == "true"
USER = "widen"


def _bindir() -> Path | None:
    found = sorted(Path("/usr/lib/postgresql").glob("*/bin/pg_ctl"))
    if found:
        return found[-1].parent
    pg_ctl = shutil.which("pg_ctl")
    return Path(pg_ctl).parent if pg_ctl else None


class PostgresServer:
    """One cluster: `url` to connect, `stop()` and `start()` to take it away and bring it back."""

    def __init__(self, bindir: Path, root: Path, port: int) -> None:
        self.bindir, self.root, self.port = bindir, root, port
        self.data, self.log = root / "data", root / "server.log"
        self.url = f"postgresql://{USER}@127.0.0.1:{port}/postgres"

    def _run(self, *args: str) -> subprocess.CompletedProcess[str]:
        command = [str(self.bindir / args[0]), *args[1:]]
        if os.geteuid() == 0:  # PostgreSQL refuses to run as root
            command = ["runuser", "-u", "postgres", "--", *command]
        return subprocess.run(command, capture_output=True, text=True, timeout=120)

    def init(self) -> None:
        done = self._run("initdb", "-D", str(self.data), "-A", "trust", "-U", USER, "--no-sync")
        if done.returncode != 0:
            raise RuntimeError(f"initdb failed: {done.stderr.strip()[-500:]}")

    def start(self) -> None:
        options = f"-p {self.port} -k {self.root} -c listen_addresses=127.0.0.1 -c fsync=off"
        done = self._run("pg_ctl", "-D", str(self.data), "-l", str(self.log), "-o", options, "-w", "-t", "60", "start")
        if done.returncode != 0:
            raise RuntimeError(f"pg_ctl start failed: {done.stderr.strip()[-500:]} {self.log.read_text()[-500:]}")

    def stop(self) -> None:
        self._run("pg_ctl", "-D", str(self.data), "-m", "fast", "-w", "stop")

    def wait_until_accepting(self, seconds: float = 30) -> None:
        import psycopg

        deadline = time.monotonic() + seconds
        while True:
            try:
                with psycopg.connect(self.url, connect_timeout=2):
                    return
            except psycopg.OperationalError:
                if time.monotonic() > deadline:
                    raise
                time.sleep(0.1)


@contextmanager
def postgres_server() -> Iterator[PostgresServer]:
    """Start a cluster, or skip (fail under CI=true) saying why not."""
    bindir = _bindir()
    if bindir is None:
        message = "no PostgreSQL server binaries (apt-get install postgresql; .ci/run does)"
        if IN_CI:
            pytest.fail(message)
        pytest.skip(message)
    root = Path(tempfile.mkdtemp(prefix="widen-pg-"))
    if os.geteuid() == 0:
        shutil.chown(root, "postgres", "postgres")
    server = PostgresServer(bindir, root, free_port())
    try:
        server.init()
        server.start()
        server.wait_until_accepting()
    except (RuntimeError, OSError, subprocess.SubprocessError) as exc:
        shutil.rmtree(root, ignore_errors=True)
        if IN_CI:
            pytest.fail(f"could not start PostgreSQL: {exc}")
        pytest.skip(f"could not start PostgreSQL here: {exc}")
    try:
        yield server
    finally:
        server.stop()
        shutil.rmtree(root, ignore_errors=True)
