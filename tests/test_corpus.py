"""Reading dumps: formats, every bad-record reason, the abort threshold, exit codes."""

from __future__ import annotations

import gzip
import json
from pathlib import Path

import pytest

from tests.helpers import write_jsonl
from training.config import CorpusSection
from training.corpus import REASONS, PostingCorpus
from widen.cli import main
from widen.model.store import Store

GOOD = {"id": "tvj-1", "title": "Staff Nurse", "description": "<p>Hensby Community Hospital</p>", "location": "Hensby"}


def _read(path: Path, **settings: object) -> tuple[list[str], PostingCorpus]:
    corpus = PostingCorpus(path, CorpusSection.model_validate(settings))
    return [p.id for p in corpus], corpus


def test_every_bad_record_reason_is_counted_with_line_numbers(tmp_path: Path) -> None:
    path = tmp_path / "dump.jsonl"
    lines = [
        json.dumps(GOOD).encode(),  # 1 good
        b"{not json",  # 2 invalid_json
        b'{"id": "x", "title": "Caf\xe9"}',  # 3 invalid_utf8 (latin-1 byte)
        json.dumps({"id": "x"}).encode(),  # 4 missing_field
        json.dumps({"id": 7, "title": "Kitchen Porter"}).encode(),  # 5 wrong_type
        json.dumps({"id": "x", "title": "KP", "description": ["list"]}).encode(),  # 6 wrong_type
        json.dumps({"id": "x", "title": "  ", "description": ""}).encode(),  # 7 empty_text
        json.dumps({"id": "x", "title": "Lorry Driver", "description": "a" * 3000}).encode(),  # 8 line_too_long
        b"[1, 2]",  # 9 invalid_json (not an object)
    ]
    path.write_bytes(b"\n".join(lines) + b"\n")
    ids, corpus = _read(path, max_line_bytes=2048)
    assert ids == ["tvj-1"]
    stats = corpus.stats
    assert stats.read == 9
    assert stats.skipped == {
        "invalid_json": 2,
        "invalid_utf8": 1,
        "missing_field": 1,
        "wrong_type": 2,
        "empty_text": 1,
        "line_too_long": 1,
    }
    assert set(stats.skipped) == set(REASONS)
    assert stats.examples["invalid_json"] == [2, 9]
    assert stats.examples["line_too_long"] == [8]


def test_examples_keep_at_most_ten_lines(tmp_path: Path) -> None:
    path = write_jsonl(tmp_path / "dump.jsonl", ["{bad"] * 25)
    _, corpus = _read(path)
    assert corpus.stats.skipped["invalid_json"] == 25
    assert corpus.stats.examples["invalid_json"] == list(range(1, 11))


def test_gzip_and_csv_read_like_jsonl(tmp_path: Path) -> None:
    gz = tmp_path / "dump.jsonl.gz"
    with gzip.open(gz, "wt", encoding="utf-8") as fh:
        fh.write(json.dumps(GOOD) + "\n")
    assert _read(gz)[0] == ["tvj-1"]
    csv_path = tmp_path / "dump.csv"
    csv_path.write_text(
        'id,title,description,location\ntvj-2,HGV Driver,"Night trunking, Quayside Freight",Marrow Quay\n,,,\n',
        encoding="utf-8",
    )
    ids, corpus = _read(csv_path)
    assert ids == ["tvj-2"]
    assert corpus.stats.skipped == {"missing_field": 1}


def test_reader_is_reiterable_and_title_comes_first(tmp_path: Path) -> None:
    path = write_jsonl(tmp_path / "dump.jsonl", [GOOD, dict(GOOD, id="tvj-2")])
    corpus = PostingCorpus(path, CorpusSection(fields=["description", "title"]))
    first = list(corpus)
    second = list(corpus)
    assert first == second and len(first) == 2
    assert first[0].texts[0] == "Staff Nurse"
    assert first[0].protected == (("location", "Hensby"),)  # the field it came from, and the name as written


def test_bad_input_above_threshold_exits_2_and_publishes_nothing(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    rows: list[object] = [dict(GOOD, id=f"tvj-{i}", title=f"Staff Nurse {i}") for i in range(90)] + ["{bad"] * 10
    path = write_jsonl(tmp_path / "dump.jsonl", rows)
    store = tmp_path / "store"
    assert main(["train", "--corpus", str(path), "--store", str(store)]) == 2
    err = capsys.readouterr().err
    assert "10 of 100 records (10.0%) are bad" in err and "invalid_json 10" in err
    assert Store(store).versions() == []
    assert Store(store).current_version() is None
    assert not any((store / ".work").iterdir())


def test_no_usable_posting_exits_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write_jsonl(tmp_path / "dump.jsonl", [{"id": "x", "title": ""}])
    assert main(["train", "--corpus", str(path), "--store", str(tmp_path / "s")]) == 2
    assert "no usable posting" in capsys.readouterr().err


def test_missing_corpus_exits_2(tmp_path: Path) -> None:
    assert main(["train", "--corpus", str(tmp_path / "none.jsonl"), "--store", str(tmp_path / "s")]) == 2


def test_duplicates_are_counted_and_skipped(tmp_path: Path) -> None:
    # The same posting twice, the second only re-marked up: same normalised title and text.
    base = dict(GOOD, description="<p>Ward based role</p>")
    rows = [base, dict(base, id="tvj-2", description="<p> Ward  based role </p>")]
    rows += [dict(GOOD, id=f"tvj-{i + 3}", title=f"Nurse {i}") for i in range(30)]
    path = write_jsonl(tmp_path / "dump.jsonl", rows)
    store = tmp_path / "store"
    code = main(["train", "--corpus", str(path), "--store", str(store), "--config", str(_tiny_config(tmp_path))])
    assert code == 0
    manifest = Store(store).manifest(Store(store).current_version() or "")
    assert manifest.corpus is not None
    assert manifest.corpus.duplicates == 1
    assert manifest.corpus.postings_used == 31


def _tiny_config(tmp_path: Path) -> Path:
    path = tmp_path / "tiny.toml"
    path.write_text("[embedding]\nmin_count = 1\nepochs = 1\n[phrases]\nmin_count = 2\n", encoding="utf-8")
    return path
