"""Reviewer decisions: they change expansions at once, survive retrains, and lose nothing."""

from __future__ import annotations

import json
import multiprocessing
import sqlite3
from pathlib import Path

import pytest

from tests.helpers import demo_config, open_store, train_quietly
from widen.cli import main
from widen.decisions.sqlite import SCHEMA_VERSION, SqliteDecisionStore
from widen.errors import DecisionError
from widen.expansion.options import ExpansionOptions
from widen.model.store import Store

OPTIONS = ExpansionOptions()


def _phrases(store: Path, query: str) -> dict[str, float]:
    lexicon = open_store(store)
    snapshot = SqliteDecisionStore(Store(store).decisions_path).snapshot()
    result = lexicon.expand(query, OPTIONS, snapshot)
    return {e.phrase: e.weight for s in result.segments for e in s.expansions}


def test_block_pin_exempt_and_withdraw_change_the_result(store_copy: Path) -> None:
    decisions = SqliteDecisionStore(Store(store_copy).decisions_path)
    before = _phrases(store_copy, "kitchen porter")
    victim = next(iter(before))
    blocked = decisions.add("kitchen porter", "block", "ana", neighbour=victim, note="checking")
    assert victim not in _phrases(store_copy, "kitchen porter")

    pin = decisions.add("kitchen porter", "pin", "ana", neighbour="pot wash assistant", weight=0.45)
    pinned = _phrases(store_copy, "kitchen porter")
    assert pinned["pot wash assistant"] == 0.45  # not in the vocabulary: a pin needs no model
    assert len(pinned) <= OPTIONS.max_per_segment

    exempt = decisions.add("Kitchen Porter", "exempt", "ben", note="too broad for our board")
    assert _phrases(store_copy, "kitchen porter") == {}

    decisions.withdraw(exempt.id, "ben")
    decisions.withdraw(pin.id, "ana")
    decisions.withdraw(blocked.id, "ana")
    assert _phrases(store_copy, "kitchen porter") == before
    events = [(a["decision_id"], a["event"]) for a in decisions.audit()]
    assert events == [(1, "made"), (2, "made"), (3, "made"), (3, "withdrawn"), (2, "withdrawn"), (1, "withdrawn")]


def test_decisions_survive_a_retrain(store_copy: Path, demo_dir: Path) -> None:
    decisions = SqliteDecisionStore(Store(store_copy).decisions_path)
    victim = next(iter(_phrases(store_copy, "lorry driver")))
    decisions.add("lorry driver", "block", "ana", neighbour=victim)
    old = Store(store_copy).current_version()
    outcome = train_quietly(demo_dir / "postings.jsonl", store_copy, demo_config(demo_dir, **{"embedding.seed": 8}))
    assert outcome.promoted and Store(store_copy).current_version() != old
    assert victim not in _phrases(store_copy, "lorry driver")


@pytest.mark.parametrize(
    "args, message",
    [
        (("staff nurse", "block", "ana"), "needs a neighbour"),
        (("staff nurse", "pin", "ana", "rn", 1.0), "between 0 and 1"),
        (("staff nurse", "pin", "ana", "rn", None), "between 0 and 1"),
        (("staff nurse", "exempt", "ana", "rn"), "leave the neighbour out"),
        (("staff nurse", "block", "ana", "rn", 0.3), "takes no weight"),
        (("staff nurse", "block", " ", "rn"), "reviewer is required"),
        (("...", "exempt", "ana"), "no words"),
        (("rn", "block", "ana", "RN"), "its own neighbour"),
        (("rn", "delete", "ana"), "action must be"),
    ],
)
def test_bad_decisions_are_refused(tmp_path: Path, args: tuple[object, ...], message: str) -> None:
    with pytest.raises(DecisionError, match=message):
        SqliteDecisionStore(tmp_path / "d.sqlite").add(*args)  # type: ignore[arg-type]


def test_database_is_in_wal_mode(tmp_path: Path) -> None:
    path = tmp_path / "d.sqlite"
    SqliteDecisionStore(path).add("rn", "exempt", "ana")
    with sqlite3.connect(path) as conn:
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"


def _writer(path: str, reviewer: str, count: int) -> None:
    store = SqliteDecisionStore(Path(path))
    for i in range(count):
        store.add(f"phrase {reviewer} {i}", "exempt", reviewer)


def test_two_processes_writing_at_once_lose_nothing(tmp_path: Path) -> None:
    path = tmp_path / "d.sqlite"
    SqliteDecisionStore(path).add("rn", "exempt", "setup")
    procs = [multiprocessing.get_context("spawn").Process(target=_writer, args=(str(path), r, 60)) for r in ("a", "b")]
    for p in procs:
        p.start()
    for p in procs:
        p.join(60)
        assert p.exitcode == 0
    assert len(SqliteDecisionStore(path).entries()) == 121
    assert len(SqliteDecisionStore(path).audit()) == 121


def test_export_and_import_round_trip(tmp_path: Path) -> None:
    source = SqliteDecisionStore(tmp_path / "a.sqlite")
    source.add("staff nurse", "pin", "ana", neighbour="rn", weight=0.4, note="same job")
    source.add("hensby", "exempt", "ana")
    target = SqliteDecisionStore(tmp_path / "b.sqlite")
    assert target.import_(source.export(), "ben") == 2
    got = [(d.phrase, d.action, d.neighbour, d.weight) for d in target.entries()]
    assert got == [("staff nurse", "pin", "rn", 0.4), ("hensby", "exempt", None, None)]
    assert "imported from decision 1 by ana" in (target.entries()[0].note or "")
    bad = source.export()
    bad["decisions"].append({"phrase": "kp", "action": "pin", "neighbour": "pot washer", "weight": 7})
    with pytest.raises(DecisionError, match="decision 3"):
        target.import_(bad, "ben")
    assert len(target.entries()) == 2  # all or nothing
    # Found by schemathesis: a field of the wrong JSON type made a 500 through the API.
    for wrong in ({"neighbour": True}, {"phrase": 3.5}, {"weight": "0.4"}, {"note": ["x"]}):
        item = {"phrase": "kp", "action": "pin", "neighbour": "pot washer", "weight": 0.3, **wrong}
        with pytest.raises(DecisionError, match=r"decision 1: \w+ must be"):
            target.import_({"format": "widen-decisions", "decisions": [item]}, "ben")
    assert len(target.entries()) == 2


def test_cli_decide_decisions_and_expand(store_copy: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    s = str(store_copy)
    assert main(["decide", "pin", "rn", "staff nurse", "--weight", "0.45", "--store", s, "--reviewer", "ana"]) == 0
    assert main(["decide", "pin", "rn", "staff nurse", "--weight", "1.5", "--store", s, "--reviewer", "ana"]) == 2
    assert main(["decisions", "--store", s, "--json"]) == 0
    out = capsys.readouterr().out
    listed = json.loads(out[out.index("[") :])
    assert [(d["action"], d["phrase"], d["neighbour"]) for d in listed] == [("pin", "rn", "staff nurse")]
    assert main(["expand", "rn", "--store", s, "--json"]) == 0
    result = json.loads(capsys.readouterr().out)
    pinned = [e for e in result["segments"][0]["expansions"] if e["source"] == "pinned"]
    assert [(e["phrase"], e["weight"], e["relation"]) for e in pinned] == [("staff nurse", 0.45, "equivalent")]
    assert 0.5 < pinned[0]["similarity"] < 1.0  # the model's own cosine, shown beside the pin
    assert main(["expand", "lorry driver", "--store", s, "--explain"]) == 0
    table = capsys.readouterr().out
    assert "dropped:" in table and "query text:" in table
    # Each drop with its reason code and the reason in words (a code and its meaning from one table).
    assert "different_duties" in table and "posted with other duties than the phrase" in table
    export = tmp_path / "decisions.json"
    assert main(["decisions", "--store", s, "--export", str(export)]) == 0
    assert main(["decide", "withdraw", "1", "--store", s, "--reviewer", "ana"]) == 0
    assert main(["decisions", "--store", s, "--import", str(export), "--reviewer", "ben"]) == 0
    assert "imported 1 decision" in capsys.readouterr().out


def test_a_database_of_the_first_schema_is_migrated_and_keeps_everything(tmp_path: Path) -> None:
    # A decisions file as the first release wrote it: 'never' for the phrase-wide action, no schema version.
    path = tmp_path / "decisions.sqlite"
    with sqlite3.connect(path) as conn:
        conn.executescript(
            """
            CREATE TABLE decisions (id INTEGER PRIMARY KEY AUTOINCREMENT, phrase TEXT NOT NULL, neighbour TEXT,
                action TEXT NOT NULL CHECK (action IN ('block', 'pin', 'never')), weight REAL,
                reviewer TEXT NOT NULL, note TEXT, created_at TEXT NOT NULL, withdrawn_at TEXT, withdrawn_by TEXT);
            CREATE TABLE audit (id INTEGER PRIMARY KEY AUTOINCREMENT, decision_id INTEGER NOT NULL,
                event TEXT NOT NULL, reviewer TEXT NOT NULL, note TEXT, at TEXT NOT NULL);
            INSERT INTO decisions VALUES (1, 'hensby', NULL, 'never', NULL, 'ana', NULL, '2026-11-01T10:00:00Z',
                NULL, NULL);
            INSERT INTO decisions VALUES (2, 'rn', 'staff nurse', 'pin', 0.4, 'ana', 'same job',
                '2026-11-01T10:01:00Z', '2026-11-02T09:00:00Z', 'ben');
            INSERT INTO audit VALUES (1, 1, 'made', 'ana', NULL, '2026-11-01T10:00:00Z');
            INSERT INTO audit VALUES (2, 2, 'made', 'ana', 'same job', '2026-11-01T10:01:00Z');
            INSERT INTO audit VALUES (3, 2, 'withdrawn', 'ben', NULL, '2026-11-02T09:00:00Z');
            """
        )
    store = SqliteDecisionStore(path)
    got = [(d.id, d.phrase, d.action, d.withdrawn_by) for d in store.entries(include_withdrawn=True)]
    assert got == [(1, "hensby", "exempt", None), (2, "rn", "pin", "ben")]
    assert [a["event"] for a in store.audit()] == ["made", "made", "withdrawn"]
    assert store.snapshot().get("hensby").exempt
    assert store.add("kp", "exempt", "ana").id == 3  # the new constraint takes the new name
    with sqlite3.connect(path) as conn:
        assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION == 3


def test_an_export_of_the_first_format_imports_with_the_new_action_name(tmp_path: Path) -> None:
    old = {"format": "widen-decisions", "version": 1, "decisions": [{"phrase": "hensby", "action": "never"}]}
    store = SqliteDecisionStore(tmp_path / "d.sqlite")
    assert store.import_(old, "ana") == 1
    assert [d.action for d in store.entries()] == ["exempt"]


def test_a_version_2_sqlite_database_migrates_keeping_its_decisions(tmp_path: Path) -> None:
    import sqlite3

    path = tmp_path / "decisions.sqlite"
    old = sqlite3.connect(path)
    old.executescript(
        "CREATE TABLE decisions (id INTEGER PRIMARY KEY AUTOINCREMENT, phrase TEXT NOT NULL, neighbour TEXT,"
        " action TEXT NOT NULL CHECK (action IN ('block', 'pin', 'exempt')), weight REAL, reviewer TEXT NOT NULL,"
        " note TEXT, created_at TEXT NOT NULL, withdrawn_at TEXT, withdrawn_by TEXT);"
        "CREATE TABLE audit (id INTEGER PRIMARY KEY AUTOINCREMENT, decision_id INTEGER NOT NULL, event TEXT NOT NULL,"
        " reviewer TEXT NOT NULL, note TEXT, at TEXT NOT NULL);"
        "INSERT INTO decisions (phrase, neighbour, action, reviewer, created_at)"
        " VALUES ('lorry driver', 'class 1 driver', 'block', 'ana', '2026-11-01T00:00:00Z');"
        "INSERT INTO audit (decision_id, event, reviewer, at) VALUES (1, 'made', 'ana', '2026-11-01T00:00:00Z');"
        "PRAGMA user_version = 2;"
    )
    old.close()
    store = SqliteDecisionStore(path)
    assert store.snapshot().get("lorry driver").blocked == frozenset({"class 1 driver"})
    store.add("lorry driver", "looked", "ben", "20261203T004644086311Z-4c6e7adb")
    assert [d.action for d in store.entries()] == ["block", "looked"] and len(store.audit()) == 2
