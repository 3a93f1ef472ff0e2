"""The passes of training made faster must make what the plain versions make: the final pass in parts
and the title pass's shortcut, against the one-process pass and the plain greedy longest match."""

from __future__ import annotations

import filecmp
import io
import itertools
import json
import os
import random
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import sparse

from tests.helpers import demo_config
from training import first_pass, stages
from training.corpus import PostingCorpus
from training.duties import _most_alike
from training.final_pass import _parts, final_pass
from training.first_pass import Scratch
from widen.model.phrases import Phraser
from widen.text.forms import PHRASE_JOINER


def test_final_pass_in_parts_writes_and_counts_what_one_process_does(demo_dir: Path, tmp_path: Path) -> None:
    config = demo_config(demo_dir)
    (tmp_path / "scratch").mkdir()
    scratch = Scratch(tmp_path / "scratch")
    phrased = stages.read_and_phrase(
        PostingCorpus(demo_dir / "postings.jsonl", config.corpus), scratch, config, io.StringIO()
    )
    made = {}
    for workers in (1, 2, 3):
        counts = final_pass(
            phrased.phraser,
            scratch,
            tmp_path / f"phrased{workers}",
            tmp_path / f"postings{workers}",
            phrased.first.names_path,
            workers,
        )
        made[workers] = [list(c.items()) for c in counts]
    assert made[1][0] and made[1][1]  # the demo dump has entries and titles
    for workers in (2, 3):
        assert filecmp.cmp(tmp_path / "phrased1", tmp_path / f"phrased{workers}", shallow=False)
        assert filecmp.cmp(tmp_path / "postings1", tmp_path / f"postings{workers}", shallow=False)
        assert made[workers] == made[1]  # the same counts, in the order entries were first met


def test_parts_start_at_postings_and_know_the_postings_before(tmp_path: Path) -> None:
    lines = []
    for n in range(500):
        lines += ["P\t\n", f"T\tjob {n}\n"] + [f"d\tword {k}\n" for k in range(n % 7)]
    scratch = tmp_path / "sentences.txt"
    scratch.write_text("".join(lines), encoding="utf-8")
    data = scratch.read_bytes()
    for count in (1, 2, 5, 64):
        parts = _parts(scratch, count)
        assert parts[0].start == 0 and parts[-1].stop == len(data)
        assert all(a.stop == b.start for a, b in itertools.pairwise(parts))  # no gap, no overlap
        for part in parts:
            assert data[part.start : part.start + 3] == b"P\t\n"
            assert part.before == data[: part.start].count(b"P\t\n")  # posting lines before it


def _plain_longest_match(titles: set[tuple[str, ...]], longest: int, entries: list[str]) -> list[str]:
    """The title pass as first written: at each entry, try every longer run (the reference)."""
    out, i = [], 0
    while i < len(entries):
        best, words = i, entries[i].split(PHRASE_JOINER)
        for j in range(i + 1, len(entries)):
            words = words + entries[j].split(PHRASE_JOINER)
            if len(words) > longest:
                break
            if tuple(words) in titles:
                best = j
        out.append(PHRASE_JOINER.join(entries[i : best + 1]) if best > i else entries[i])
        i = best + 1
    return out


def test_title_pass_shortcut_matches_the_plain_longest_match() -> None:
    titles = ["care_assistant", "senior_care_assistant", "early_years_practitioner", "night_care_worker", "hgv_driver"]
    phraser = Phraser([], titles)
    words = [
        "care",
        "assistant",
        "senior",
        "early_years",
        "early",
        "years",
        "practitioner",
        "night",
        "worker",
        "care_assistant",
        "hgv",
        "driver",
        "the",
        "of",
    ]
    rng = random.Random(3)
    title_words = {tuple(t.split(PHRASE_JOINER)) for t in titles}
    joined = 0
    for _ in range(3000):
        sentence = [rng.choice(words) for _ in range(rng.randrange(0, 9))]
        got = phraser(list(sentence))
        assert got == _plain_longest_match(title_words, 3, sentence), sentence
        joined += sum(e in titles for e in got) > sum(e in titles for e in sentence)
    assert joined > 100  # the sentences drawn did join titles


def test_phrase_pass_in_workers_writes_what_one_process_does(
    demo_dir: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    config = demo_config(demo_dir)
    (tmp_path / "first").mkdir()
    scratch = Scratch(tmp_path / "first")
    phrased = stages.read_and_phrase(
        PostingCorpus(demo_dir / "postings.jsonl", config.corpus), scratch, config, io.StringIO()
    )
    monkeypatch.setattr(first_pass, "_RUN_BYTES", 4096)  # many runs, so order across runs is tested
    for workers in (1, 2):
        folder = tmp_path / f"w{workers}"
        folder.mkdir()
        shutil.copy(scratch.path, folder / "sentences.0.txt")
        again = Scratch(folder, workers)
        assert again.apply(phrased.phraser) == again.path == folder / "sentences.1.txt"
        assert again.path.is_file() and not (folder / "sentences.0.txt").exists()
    # The reference: the pass applied line by line, here.
    with scratch.path.open(encoding="utf-8") as src:
        by_hand = "".join(f"{line[:2]}{' '.join(phrased.phraser(line[2:].split()))}\n" for line in src)
    assert by_hand.count("\n") > 10_000 and PHRASE_JOINER in by_hand  # the demo dump went through, phrased
    for workers in (1, 2):
        assert (tmp_path / f"w{workers}" / "sentences.1.txt").read_text(encoding="utf-8") == by_hand


def test_title_table_rows_in_workers_are_the_rows_one_process_finds() -> None:
    rng = np.random.default_rng(4)
    dense = rng.random((300, 80)) * (rng.random((300, 80)) < 0.2)
    dense /= np.maximum(np.linalg.norm(dense, axis=1, keepdims=True), 1e-12)
    matrix = sparse.csr_matrix(dense)
    one = _most_alike(matrix, 5, 64, 1)
    two = _most_alike(matrix, 5, 64, 2)
    assert np.array_equal(one[0], two[0]) and np.array_equal(one[1], two[1])
    # The reference: every cosine with numpy's dense product, the title itself left out.
    cosines = dense @ dense.T
    np.fill_diagonal(cosines, -np.inf)
    best = np.sort(cosines, axis=1)[:, ::-1][:, :5]
    assert np.allclose(one[1], best, atol=1e-6)


_TABLE_IN_A_PROCESS = r"""
import json, sys
from pathlib import Path
from training.config import DutiesSection
from training.duties import title_table
words = [f"w{n}" for n in range(60)]
table = title_table(Path(sys.argv[1]), {w: n for n, w in enumerate(words)}, DutiesSection(min_postings=1), seed=1)
print(json.dumps({"keys": table.keys, "index": table.index.tolist(), "stats": table.stats}))
"""


def test_title_table_is_the_same_whatever_python_s_hash_seed(tmp_path: Path) -> None:
    # Postings naming several titles each: the order they are taken in decides the calibration sample.
    rng = random.Random(5)
    titles = [f"job{n}_worker" for n in range(12)]
    lines = []
    for _ in range(900):
        job = rng.randrange(len(titles))
        named = [titles[job], titles[(job + 1) % len(titles)]][: rng.randrange(1, 3)]  # half name two jobs
        # Each job's duties are words of its own, some shared with the next job's.
        body = " ".join(f"w{(5 * job + rng.randrange(10)) % 60}" for _ in range(rng.randrange(5, 25)))
        lines.append(f"{named[0]}\t{body}\t{' '.join(named)}\n")
    postings = tmp_path / "postings.txt"
    postings.write_text("".join(lines), encoding="utf-8")
    made = []
    for seed in ("1", "2", "3"):
        done = subprocess.run(
            [sys.executable, "-c", _TABLE_IN_A_PROCESS, str(postings)],
            env={**os.environ, "PYTHONHASHSEED": seed},
            capture_output=True,
            text=True,
            check=True,
        )
        made.append(json.loads(done.stdout))
    assert made[0]["stats"]["same_job"][2][2] > 0.1  # the calibration was measured
    assert made[0] == made[1] == made[2]
