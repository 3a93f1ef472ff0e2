"""The layout's rules, checked the way `make lint` checks them: import-linter's own contracts, run on
a copy of the packages with a deliberate bad import, must fail; no module grows past 300 lines and no
function past 60, data tables and the argument parser aside."""

from __future__ import annotations

import ast
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGES = ("widen", "training", "service")
LINT_IMPORTS = Path(sys.executable).parent / "lint-imports"
FOLDERS = (*PACKAGES, "demo_postings", "bench", "tests")
# Modules that are mostly data (the demo generator's job families), allowed past the limits.
DATA_TABLES = {"demo_postings/tollbridge.py", "demo_postings/oxmere.py"}
# Functions that are one long declaration: the command's argument parser.
DECLARATIONS = {("widen/cli/parser.py", "build_parser")}
LAYERS = "layers: command, then the two leaves, then the core's own layers"


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
        ("training/gate.py", "import service.state\n", LAYERS),  # the two leaves never import each other
        ("service/state.py", "import training.pipeline\n", LAYERS),
        ("service/app.py", "import widen.cli\n", LAYERS),  # only the command sits above the leaves
        ("widen/expansion/expand.py", "import service.cache\n", LAYERS),  # the core imports no leaf
        ("widen/model/bundle.py", "import widen.expansion.options\n", LAYERS),  # the core's own layers
        ("widen/text/forms.py", "import widen.model.phrases\n", LAYERS),
        ("widen/decisions/decision.py", "import widen.evaluation.runs\n", LAYERS),
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


def _sources() -> dict[str, str]:
    return {
        path.relative_to(ROOT).as_posix(): path.read_text(encoding="utf-8")
        for folder in FOLDERS
        for path in (ROOT / folder).rglob("*.py")
        if "__pycache__" not in path.parts
    }


def test_no_module_is_over_300_lines_except_data_tables() -> None:
    long = {
        rel: len(text.splitlines())
        for rel, text in _sources().items()
        if len(text.splitlines()) > 300 and rel not in DATA_TABLES
    }
    assert long == {}


def test_no_function_is_over_60_lines_except_data_and_the_parser() -> None:
    long = {}
    for rel, text in _sources().items():
        if rel in DATA_TABLES:
            continue
        for node in ast.walk(ast.parse(text)):
            if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef) and (rel, node.name) not in DECLARATIONS:
                lines = (node.end_lineno or node.lineno) - node.lineno + 1
                if lines > 60:
                    long[f"{rel}:{node.name}"] = lines
    assert long == {}
