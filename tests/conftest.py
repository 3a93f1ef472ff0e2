"""Shared fixtures: small dumps of both demo boards, and a store trained on each once per session.

What tests share besides fixtures is in `tests/helpers.py`; no test imports this module."""

from __future__ import annotations

import itertools
import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest

from demo_postings.generate import generate
from tests.helpers import SMALL_POSTINGS, Opened, demo_config, open_store, train_quietly
from tests.postgres_server import PostgresServer, postgres_server


@pytest.fixture(scope="session")
def demo_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A generated Tollbridge Valley dump (postings, queries, truth, pairs), small enough to train in seconds."""
    out = tmp_path_factory.mktemp("demo")
    generate(out, SMALL_POSTINGS, seed=11)
    return out


@pytest.fixture(scope="session")
def oxmere_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A generated Oxmere Bay dump: the board written differently, on which no threshold was chosen."""
    out = tmp_path_factory.mktemp("oxmere")
    generate(out, SMALL_POSTINGS, seed=11, board="oxmere")
    return out


@pytest.fixture(scope="session")
def oxmere_store(oxmere_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A store trained on the Oxmere Bay dump with the default config, served whatever the gate said
    (the tests measure it; they do not assume it is good). Read-only."""
    store = tmp_path_factory.mktemp("oxmere-store")
    train_quietly(oxmere_dir / "postings.jsonl", store, demo_config(oxmere_dir), force=True)
    return store


@pytest.fixture(scope="session")
def trained_store(demo_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A store with one current bundle trained on the small demo dump. Treat as read-only."""
    store = tmp_path_factory.mktemp("store")
    outcome = train_quietly(demo_dir / "postings.jsonl", store, demo_config(demo_dir))
    assert outcome.promoted, outcome.gate.reasons
    return store


@pytest.fixture(scope="session")
def demo(trained_store: Path) -> Opened:
    """The trained store's bundle opened as the service opens it (its lexicon and what is kept of it)."""
    return open_store(trained_store)


@pytest.fixture
def store_copy(trained_store: Path, tmp_path: Path) -> Iterator[Path]:
    """A private copy of the trained store, for tests that change it."""
    target = tmp_path / "store"
    shutil.copytree(trained_store, target)
    yield target


@pytest.fixture(scope="session")
def two_bundle_store(trained_store: Path, demo_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The trained store plus a second bundle trained with another seed (to compare). Read-only."""
    store = tmp_path_factory.mktemp("two") / "store"
    shutil.copytree(trained_store, store)
    train_quietly(demo_dir / "postings.jsonl", store, demo_config(demo_dir, **{"embedding.seed": 5}))
    return store


@pytest.fixture(scope="session")
def postgres() -> Iterator[PostgresServer]:
    """A throwaway PostgreSQL cluster for the session (skips locally without one; fails under CI=true)."""
    with postgres_server() as server:
        yield server


_databases = itertools.count(1)


@pytest.fixture
def postgres_url(postgres: PostgresServer) -> str:
    """A new, empty database on the session's cluster, for one test."""
    import psycopg

    name = f"widen_test_{next(_databases)}"
    with psycopg.connect(postgres.url, autocommit=True) as conn:
        conn.execute(f"CREATE DATABASE {name}")
    return postgres.url.rsplit("/", 1)[0] + f"/{name}"
