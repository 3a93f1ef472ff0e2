"""The layout's rules, checked the way `make lint` checks them: import-linter's own contracts, run on
a copy of the packages with a deliberate bad import, must fail; and no module grows past 400 lines."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGES = ("widen", "training", "service")
LINT_IMPORTS = Path(sys.executable).parent / "lint-imports"
# Modules that are mostly data (the demo generator's job families), allowed past the limit.
DATA_TABLES = {"demo_postings/tollbridge.py", "demo_postings/oxmere.py"}


def _copy(tmp_path: Path) -> Path:
    for name in PACKAGES:
        shutil.copytree(ROOT / name, tmp_path / name, ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    return tmp_path


def _lint(where: Path) -> subprocess.CompletedProcess[str]:
    # Reference: import-linter itself, the tool `make lint` runs, reading the contracts in pyproject.toml.
    return subprocess.run(
        [str(LINT_IMPORTS), "--no-cache"], cwd=where, capture_output=True, text=True, env={"PYTHONPATH": str(where)}
    )


def test_the_contracts_hold_on_the_tree_as_it_is(tmp_path: Path) -> None:
    done = _lint(_copy(tmp_path))
    assert done.returncode == 0, done.stdout + done.stderr
    assert "2 kept, 0 broken" in done.stdout


@pytest.mark.parametrize(
    "module, bad_import, broken",
    [
        ("training/gate.py", "import service.state\n", "training and service independent"),
        ("service/state.py", "import training.pipeline\n", "training and service independent"),
        ("widen/expansion.py", "import service.cache\n", "widen core below the two leaves"),
        ("service/routes/demo.py", "import service.app\n", "no import loop"),
    ],
)
def test_a_wrong_import_fails_the_lint(tmp_path: Path, module: str, bad_import: str, broken: str) -> None:
    where = _copy(tmp_path)
    path = where / module
    text = path.read_text(encoding="utf-8")
    anchor = "from __future__ import annotations\n"
    path.write_text(text.replace(anchor, anchor + bad_import, 1), encoding="utf-8")
    done = _lint(where)
    assert done.returncode != 0, done.stdout
    assert broken in done.stdout and "BROKEN" in done.stdout, done.stdout


def test_no_module_is_over_400_lines_except_data_tables() -> None:
    long = {}
    for folder in (*PACKAGES, "demo_postings", "bench"):
        for path in (ROOT / folder).rglob("*.py"):
            rel = path.relative_to(ROOT).as_posix()
            lines = len(path.read_text(encoding="utf-8").splitlines())
            if lines > 400 and rel not in DATA_TABLES:
                long[rel] = lines
    assert long == {}
