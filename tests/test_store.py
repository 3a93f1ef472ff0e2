"""Publishing: the gate, promote, rollback, pruning, interruption and determinism."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

from tests.helpers import BROKEN, SMALL_POSTINGS, demo_config, train_quietly
from training.config import load_config
from widen.cli import main
from widen.errors import ConfigError
from widen.model.store import Store

# A model that cannot have learned anything: one epoch at a learning rate near zero, and no duties
# (a title's duties are counted from the corpus, so they would still find its other names).


def test_bundle_manifest_describes_the_bundle(trained_store: Path) -> None:
    store = Store(trained_store)
    version = store.current_version()
    assert version is not None
    manifest = store.manifest(version)
    assert manifest.format_version == 1 and manifest.version == version
    assert manifest.corpus is not None and manifest.gate is not None
    corpus = manifest.corpus.model_dump()
    assert corpus["postings_read"] == SMALL_POSTINGS
    assert corpus["postings_used"] + corpus["duplicates"] == SMALL_POSTINGS
    assert len(corpus["sha256"]) == 64
    assert manifest.config["embedding"]["vector_size"] == 100  # defaults are written out
    assert manifest.gate.passed is True and manifest.gate.forced is False
    assert set(manifest.files) >= {"vectors.kv", "vectors.kv.vectors.npy", "neighbours_index.npy", "phrases.json"}
    assert store.verify(version) == []


def test_vectors_open_with_gensim_memory_mapped(trained_store: Path) -> None:
    from gensim.models import KeyedVectors

    store = Store(trained_store)
    folder = store.bundle_dir(store.current_version() or "")
    # Reference library: gensim's own loader, memory-mapping the array as the service will.
    wv = KeyedVectors.load(str(folder / "vectors.kv"), mmap="r")
    assert isinstance(wv.vectors, np.memmap)
    assert "staff_nurse" in wv.key_to_index
    assert np.load(folder / "output_vectors.npy").shape == wv.vectors.shape


def test_promote_and_rollback(store_copy: Path, demo_dir: Path, capsys: pytest.CaptureFixture[str]) -> None:
    store = Store(store_copy)
    first = store.current_version() or ""
    second = train_quietly(demo_dir / "postings.jsonl", store_copy, demo_config(demo_dir, **{"embedding.seed": 5}))
    assert second.promoted, second.gate.reasons
    assert main(["rollback", "--store", str(store_copy)]) == 0
    assert store.current_version() == first
    assert {i.version: i.status for i in store.listing()}[second.version] == "retired"
    assert main(["promote", second.version, "--store", str(store_copy)]) == 0
    assert store.current_version() == second.version
    # A refused bundle needs --force to be promoted.
    refused = train_quietly(demo_dir / "postings.jsonl", store_copy, demo_config(demo_dir, **BROKEN))
    assert main(["promote", refused.version, "--store", str(store_copy)]) == 2
    assert "add --force" in capsys.readouterr().err
    assert main(["promote", refused.version, "--store", str(store_copy), "--force"]) == 0
    # Rolling back from the forced one returns to the bundle that served before it.
    assert main(["rollback", "--store", str(store_copy)]) == 0
    assert store.current_version() == second.version
    capsys.readouterr()
    assert main(["bundles", "--store", str(store_copy), "--json"]) == 0
    statuses = {b["version"]: b["status"] for b in json.loads(capsys.readouterr().out)}
    assert statuses == {first: "retired", second.version: "current", refused.version: "retired"}


def test_promote_refuses_a_corrupt_bundle(store_copy: Path) -> None:
    store = Store(store_copy)
    version = store.current_version() or ""
    target = store.bundle_dir(version) / "neighbours_similarity.npy"
    data = bytearray(target.read_bytes())
    data[-1] ^= 0xFF
    target.write_bytes(bytes(data))
    assert any("does not match its sha256" in p for p in store.verify(version))
    assert main(["promote", version, "--store", str(store_copy)]) == 1


def test_prune_keeps_the_newest_and_never_the_current(store_copy: Path, demo_dir: Path) -> None:
    store = Store(store_copy)
    serving = store.current_version()
    config = demo_config(demo_dir, **BROKEN, **{"store.keep": 2})
    made = [train_quietly(demo_dir / "postings.jsonl", store_copy, config).version for _ in range(3)]
    versions = store.versions()
    assert serving in versions  # current, though older than the rest
    assert made[-2] in versions and made[-1] in versions
    assert made[0] not in versions


def test_bundles_lists_status_and_score(trained_store: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["bundles", "--store", str(trained_store), "--json"]) == 0
    listed = json.loads(capsys.readouterr().out)
    assert [b["status"] for b in listed] == ["current"]
    # The default model finds four of five near pairs of the demo board and keeps every far pair apart.
    assert 0.75 <= listed[0]["gate_score"] <= 1.0
    assert main(["bundles", "--store", str(trained_store)]) == 0
    assert "current" in capsys.readouterr().out


def _widen(*args: str) -> list[str]:
    return [sys.executable, "-m", "widen.cli", *args]


def _collect(proc: subprocess.Popen[str], lines: list[str]) -> None:
    """Keep every line a process writes to stderr, as it writes them."""
    for line in proc.stderr or []:
        lines.append(line)


def test_sigkill_during_training_leaves_the_store_as_it_was(store_copy: Path, demo_dir: Path, tmp_path: Path) -> None:
    store = Store(store_copy)
    before = (store.current_version(), [i.as_dict() for i in store.listing()])
    config = tmp_path / "slow.toml"
    config.write_text(f'[embedding]\nepochs = 40\n[gate]\npairs = "{demo_dir / "pairs.tsv"}"\n', encoding="utf-8")
    work = store_copy / ".work"
    stages: list[Callable[[list[str]], bool]] = [
        # while reading: the first scratch file is being written
        lambda lines: any(work.glob("*/_scratch/sentences.0.txt")),
        # while phrasing: the first phrase pass is done, the second runs
        lambda lines: any(line.startswith("[phrase passes] 1/") for line in lines),
        # while training: the first of 40 skip-gram epochs is done
        lambda lines: any(line.startswith("[skip-gram epochs] 1/") for line in lines),
    ]
    for stage in stages:
        proc = subprocess.Popen(
            _widen(
                "train",
                "--corpus",
                str(demo_dir / "postings.jsonl"),
                "--store",
                str(store_copy),
                "--config",
                str(config),
            ),
            stdout=subprocess.DEVNULL,
            stderr=subprocess.PIPE,
            text=True,
        )
        lines: list[str] = []
        reader = threading.Thread(target=_collect, args=(proc, lines), daemon=True)
        reader.start()
        deadline = time.monotonic() + 120
        while not stage(lines):
            assert proc.poll() is None, "training ended before it could be interrupted"
            assert time.monotonic() < deadline, "the stage never came"
            time.sleep(0.01)
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
        reader.join(5)
        assert (store.current_version(), [i.as_dict() for i in store.listing()]) == before
    # The next run clears what the killed runs left half-written.
    assert any((store_copy / ".work").iterdir())
    quick = subprocess.run(
        _widen(
            "train",
            "--corpus",
            str(demo_dir / "postings.jsonl"),
            "--store",
            str(store_copy),
            "--pairs",
            str(demo_dir / "pairs.tsv"),
        ),
        capture_output=True,
        text=True,
        check=False,
    )
    assert quick.returncode in (0, 3), quick.stderr
    assert "cleared" in quick.stderr
    assert not any((store_copy / ".work").iterdir())


def test_same_seed_one_worker_gives_identical_vectors_in_two_processes(demo_dir: Path, tmp_path: Path) -> None:
    config = tmp_path / "det.toml"
    config.write_text("[embedding]\nworkers = 1\nseed = 4\nepochs = 2\n", encoding="utf-8")
    vectors = []
    for run in ("a", "b"):
        store = tmp_path / run
        done = subprocess.run(
            _widen(
                "train", "--corpus", str(demo_dir / "postings.jsonl"), "--store", str(store), "--config", str(config)
            ),
            capture_output=True,
            text=True,
            check=False,
            env=dict(os.environ, PYTHONHASHSEED=(run == "a" and "1") or "2"),
        )
        assert done.returncode == 0, done.stderr
        vectors.append(np.array(Store(store).open_bundle().vectors.vectors))
    assert np.array_equal(vectors[0], vectors[1])


def test_unknown_config_key_fails_at_once_naming_it(tmp_path: Path) -> None:
    path = tmp_path / "bad.toml"
    path.write_text("[embedding]\nvector_sise = 100\n", encoding="utf-8")
    with pytest.raises(ConfigError, match=r"unknown key 'embedding\.vector_sise'"):
        load_config(path)
    path.write_text("[embedding]\nwindow = 0\n", encoding="utf-8")
    with pytest.raises(ConfigError, match=r"'embedding\.window'"):
        load_config(path)
    started = time.monotonic()
    assert main(["train", "--corpus", "x.jsonl", "--store", str(tmp_path / "s"), "--config", str(path)]) == 2
    assert time.monotonic() - started < 1.0


def test_print_config_writes_every_default_and_reads_back(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["train", "--print-config"]) == 0
    text = capsys.readouterr().out
    for key in (
        "[corpus]",
        "max_bad_fraction",
        "[phrases]",
        "max_words",
        "[embedding]",
        "negative",
        "[neighbours]",
        "top_k",
        "[gate]",
        "tolerance",
        "[store]",
        "keep",
    ):
        assert key in text
    path = tmp_path / "printed.toml"
    path.write_text(text, encoding="utf-8")
    assert load_config(path) == load_config(None)
