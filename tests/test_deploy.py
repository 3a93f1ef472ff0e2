"""The nightly script picks the newest dump and passes widen train's exit code through."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from tests.conftest import write_jsonl

ROOT = Path(__file__).resolve().parent.parent
SCRIPT = ROOT / "deploy" / "widen-nightly.sh"
WIDEN = Path(sys.executable).parent / "widen"


def _run(dumps: Path, store: Path, **extra: str) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ, WIDEN_DUMPS=str(dumps), WIDEN_STORE=str(store), WIDEN_BIN=str(WIDEN), **extra)
    return subprocess.run(["bash", str(SCRIPT)], capture_output=True, text=True, env=env, check=False)


def test_nightly_trains_on_the_newest_dump(tmp_path: Path) -> None:
    dumps = tmp_path / "dumps"
    dumps.mkdir()
    # The older dump is unusable; if it were picked the run would exit 2.
    older = write_jsonl(dumps / "tollbridge-2026-11-29.jsonl", ["{broken"])
    os.utime(older, (1_700_000_000, 1_700_000_000))  # older than the next by its timestamp (2023)
    rows = [
        {"id": f"tvj-{i}", "title": f"Kitchen Porter {i % 7}", "description": "Wash pots in Hensby"} for i in range(60)
    ]
    write_jsonl(dumps / "tollbridge-2026-11-30.jsonl", rows)
    config = tmp_path / "c.toml"
    config.write_text("[embedding]\nmin_count = 1\nepochs = 1\n", encoding="utf-8")
    done = _run(dumps, tmp_path / "store", WIDEN_CONFIG=str(config))
    assert done.returncode == 0, done.stderr
    assert "tollbridge-2026-11-30.jsonl" in done.stdout


def test_nightly_with_no_dump_exits_2(tmp_path: Path) -> None:
    (tmp_path / "dumps").mkdir()
    done = _run(tmp_path / "dumps", tmp_path / "store")
    assert done.returncode == 2 and "no dump" in done.stderr
