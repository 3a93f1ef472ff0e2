"""What the parent of `widen serve --workers N` imports before forking (service.forked)."""

from __future__ import annotations

import json
import subprocess
import sys

# uvicorn's own Config.load() is the reference for what a worker imports on starting: run in a
# fresh interpreter after preimport(), with the worker class's settings, it must import nothing new.
_CHECK = """
import json, sys
from service.forked import SharedUvicornWorker, preimport
preimport()
before = set(sys.modules)
from uvicorn.config import Config
async def app(scope, receive, send): pass
config = Config(app, **SharedUvicornWorker.CONFIG_KWARGS)
config.load()
config.get_loop_factory()
print(json.dumps(sorted(m for m in set(sys.modules) - before if not m.startswith("uvicorn.config"))))
"""


def test_the_parent_imports_everything_a_worker_loads_on_starting() -> None:
    done = subprocess.run([sys.executable, "-c", _CHECK], capture_output=True, text=True, check=True)
    assert json.loads(done.stdout) == []


def test_no_websocket_protocol_is_loaded() -> None:
    done = subprocess.run(
        [sys.executable, "-c", _CHECK + "print('websockets' in sys.modules)"],
        capture_output=True,
        text=True,
        check=True,
    )
    assert done.stdout.split()[-1] == "False"
