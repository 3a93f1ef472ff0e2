"""The demo boards: what their ground truth promises, and what makes the second board harder."""

from __future__ import annotations

import json
import re
from collections import Counter
from pathlib import Path
from typing import Any

import pytest

from demo_postings.generate import BOARDS, generate
from demo_postings.oxmere import PATTERN_SPELLINGS
from demo_postings.queries import SEEKER_PATTERNS
from widen.text.forms import phrase_of_text

# How the boards write each shift pattern: Oxmere Bay's spellings, and Tollbridge's title modifiers
# and hours lines (demo_postings/postings.py).
SPELLINGS = {
    p: [*s, *{"nights": ["night shift"], "weekends": ["weekend work"]}.get(p, [])] for p, s in PATTERN_SPELLINGS.items()
}


def _rows(path: Path) -> list[dict[str, Any]]:
    return [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()]


@pytest.mark.parametrize("board", sorted(BOARDS))
def test_truth_relates_titles_and_flags_coded_ones(board: str) -> None:
    families = BOARDS[board].families
    titles = {t for f in families for t in f.equivalent}
    for family in families:
        # A related entry is a title of another job, never a family's name that no posting uses.
        assert set(family.related) <= titles - set(family.equivalent), family.name
        assert set(family.coded) <= set(family.equivalent), family.name
        assert all(t == t.lower() for t in family.equivalent), family.name
    assert {t for f in families for t in f.coded}, "the caution needs coded titles to point at"


@pytest.mark.parametrize("fixture", ["demo_dir", "oxmere_dir"])
def test_no_posting_states_its_job_s_other_names(fixture: str, request: pytest.FixtureRequest) -> None:
    folder: Path = request.getfixturevalue(fixture)
    text = (folder / "postings.jsonl").read_text(encoding="utf-8")
    assert not re.search(r"also (advertised|known) as|other(wise)? called", text, re.IGNORECASE)


def test_the_second_board_is_written_differently(oxmere_dir: Path) -> None:
    rows = _rows(oxmere_dir / "postings.jsonl")
    truth = json.loads((oxmere_dir / "truth.json").read_text())
    towns = ["Oxmere", "Brackenholt", "Pellmire", "Quillwick", "Orrinsby", "Fennick Cross", "Marlstow", "Dunnock Ferry"]
    # Agencies paste a paragraph naming every town, whatever the posting's own town.
    agency = [r for r in rows if "recruitment agency covering" in r["description"]]
    assert 0.2 < len(agency) / len(rows) < 0.4
    assert all(all(t in r["description"] for t in towns) for r in agency)
    # Shouted titles, and employers that use more than one title of a job.
    assert 0.03 < sum(r["title"].isupper() for r in rows) / len(rows) < 0.2
    variants: dict[tuple[str, str], set[str]] = {}
    for r in rows:
        for family in truth["families"]:
            for t in family["equivalent"]:
                if re.search(rf"\b{re.escape(t)}\b", r["title"].lower()):
                    variants.setdefault((r["employer"], family["name"]), set()).add(t)
    assert sum(len(v) >= 2 for v in variants.values()) / len(variants) > 0.5
    # About 1% of words carry a typo (here: words the board's own text never spells that way elsewhere).
    words = Counter(w for r in rows for w in re.findall(r"[a-z]{5,}", r["description"].lower()))
    rare = sum(n for w, n in words.items() if n <= 2)
    assert 0.002 < rare / sum(words.values()) < 0.03
    # Reposts: the same description under another id.
    descriptions = Counter(re.sub(r"\s+", " ", r["description"].replace("&nbsp;", " ")) for r in rows)
    assert 0.02 < sum(n - 1 for n in descriptions.values()) / len(rows) < 0.1


@pytest.mark.parametrize("fixture", ["demo_dir", "oxmere_dir"])
def test_queries_are_typed_as_seekers_type_and_judged_by_what_they_name(
    fixture: str, request: pytest.FixtureRequest
) -> None:
    folder: Path = request.getfixturevalue(fixture)
    rows = {r["id"]: r for r in _rows(folder / "postings.jsonl")}
    queries = _rows(folder / "queries.jsonl")
    kinds = Counter(q["kind"] for q in queries)
    assert set(kinds) == {"title", "town", "noise", "shift", "typo"}
    assert 0.05 < kinds["typo"] / len(queries) < 0.15
    by_id = {q["id"]: q for q in queries}
    for q in queries:
        assert q["query"] == q["query"].lower()
        if q["kind"] in ("noise", "shift", "typo"):
            assert q["base"] in by_id
        if q["kind"] == "typo":
            assert q["query"] != by_id[q["base"]]["query"]
            assert q["relevant"] == by_id[q["base"]]["relevant"]  # a typo does not change what is wanted
        for pid, grade in q["relevant"].items():
            posting = rows[pid]
            assert grade in (1, 2)
            if q["town"]:
                assert posting["location"] == q["town"]
            if q["pattern"]:
                written = f" {phrase_of_text(posting['title'] + ' ' + posting['description'])} "
                assert any(f" {phrase_of_text(s)} " in written for s in SPELLINGS[q["pattern"]]), (q["query"], pid)
    # Relevance respects the town and the pattern: such a query wants fewer postings than its title alone.
    for kind in ("town", "shift"):
        named = next(q for q in queries if q["kind"] == kind)
        plain = next(q for q in queries if q["kind"] == "title" and q["title"] == named["title"])
        assert set(named["relevant"]) < set(plain["relevant"]), named["query"]


def test_the_same_arguments_give_the_same_files(tmp_path: Path) -> None:
    for run in ("a", "b"):
        generate(tmp_path / run, 300, seed=5, board="oxmere")
    for name in ("postings.jsonl", "open_postings.jsonl", "queries.jsonl", "truth.json", "pairs.tsv"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes(), name


def test_query_log_is_a_long_tailed_day_of_seeker_queries(demo_dir: Path, tmp_path: Path) -> None:
    """The day's query log that `make bench` replays: time-ordered, seeker-typed, Zipf-like."""
    import math

    import numpy as np

    rows = _rows(demo_dir / "query_log.jsonl")
    assert len(rows) == 20000
    assert [r["at"] for r in rows] == sorted(r["at"] for r in rows)
    assert all(r["at"].startswith("2026-11-30T") for r in rows)
    counts = Counter(r["q"] for r in rows)
    # Long-tailed: most distinct queries arrive once, a few many times.
    assert sum(1 for c in counts.values() if c == 1) > len(counts) / 2
    assert counts.most_common(1)[0][1] > 100
    # Zipf's law, frequency ~ 1 / rank^s with s = 1 here: the least-squares slope of log frequency
    # against log rank over the 50 most frequent queries is near -1 (Zipf's rank-frequency law; the
    # fit is the usual check, common practice, no source). A uniform draw would give a slope near 0.
    top = [c for _, c in counts.most_common(50)]
    slope = float(np.polyfit([math.log(r) for r in range(1, 51)], [math.log(c) for c in top], 1)[0])
    assert -1.4 < slope < -0.6, slope
    # Typed the way seekers type: towns, words that name no job, shift patterns, typos.
    towns = {t.lower() for t in BOARDS["tollbridge"].towns}
    titles = {t for f in BOARDS["tollbridge"].families for t in [*f.equivalent, *f.related]}
    title_words = {w for t in titles for w in t.split(" ")}
    distinct = list(counts)
    assert any(any(q.endswith(" " + t) for t in towns) for q in distinct)
    assert any(" jobs" in q or " near " in q for q in distinct)
    assert any(q.startswith(("temp ", "nights ", "part-time ", "pt ")) for q in distinct)
    typed_wrong = [q for q in distinct if not set(q.split(" ")) <= title_words | towns | _KNOWN_WORDS]
    assert typed_wrong, "about one in ten distinct queries has a typo"
    # Deterministic, and written on its own random stream: the log's size does not change the postings.
    generate(tmp_path / "a", 300, seed=11, log_queries=50)
    generate(tmp_path / "b", 300, seed=11, log_queries=500)
    assert (tmp_path / "a" / "postings.jsonl").read_bytes() == (tmp_path / "b" / "postings.jsonl").read_bytes()
    assert (tmp_path / "a" / "queries.jsonl").read_bytes() == (tmp_path / "b" / "queries.jsonl").read_bytes()
    generate(tmp_path / "c", 300, seed=11, log_queries=50)
    assert (tmp_path / "a" / "query_log.jsonl").read_bytes() == (tmp_path / "c" / "query_log.jsonl").read_bytes()


#: Every word a correctly typed log query holds besides titles and towns: noise words and pattern spellings.
_KNOWN_WORDS = {"jobs", "near", "me", "in", "vacancies", "job"} | {
    w for group in SEEKER_PATTERNS.values() for s in group for w in s.split(" ")
}
