"""What seekers really type: noise words, places and employers, shift patterns, typos, whole titles.

Each test runs queries through a real bundle trained on a small dump of a demo board; where the
claim is about what a search finds, the query goes through tantivy (from PyPI), the engine whose
parser and BM25 stand in for the search team's own.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from rapidfuzz import distance

from tests.helpers import Opened, open_store
from widen.decisions.open_store import open_decision_store
from widen.evaluation.index import SearchIndex
from widen.expansion.options import ExpansionOptions
from widen.expansion.query_text import words_text
from widen.model.store import Store

DEFAULTS = ExpansionOptions()
MODIFIERS = frozenset(DEFAULTS.modifiers)


def _rows(folder: Path, name: str) -> list[dict[str, Any]]:
    with (folder / name).open(encoding="utf-8") as fh:
        return [json.loads(line) for line in fh if line.strip()]


@pytest.fixture(scope="module")
def tollbridge(trained_store: Path) -> Opened:
    return open_store(trained_store)


@pytest.fixture(scope="module")
def oxmere(oxmere_store: Path) -> Opened:
    return open_store(oxmere_store)


@pytest.fixture(scope="module")
def oxmere_index(oxmere_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> SearchIndex:
    return SearchIndex(oxmere_dir / "postings.jsonl", tmp_path_factory.mktemp("oxmere-index"))


@pytest.fixture(scope="module")
def oxmere_postings(oxmere_dir: Path) -> list[dict[str, Any]]:
    return _rows(oxmere_dir, "postings.jsonl")


# -- noise words ---------------------------------------------------------------------------------


def test_noise_words_are_shown_as_their_own_kind_and_never_required(tollbridge: Opened) -> None:
    noisy = tollbridge.expand("kp jobs near hensby", DEFAULTS)
    plain = tollbridge.expand("kp hensby", DEFAULTS)
    kinds = [(s.text, s.kind) for s in noisy.segments]
    # The front end sees the noise words, as their own kind...
    assert ("jobs", "noise") in kinds and ("near", "noise") in kinds
    # ...and they are not in the query: it is the query of the same words without them.
    assert noisy.query_text == plain.query_text
    assert '"jobs"' not in noisy.query_text and '"near"' not in noisy.query_text
    # The list is configuration: with an empty one, "jobs" is a word of the query again.
    bare = tollbridge.expand("kp jobs near hensby", DEFAULTS.model_copy(update={"noise_words": ()}))
    assert all(s.kind != "noise" for s in bare.segments) and '"jobs"' in bare.query_text


# -- places and employers ------------------------------------------------------------------------


def test_a_place_in_its_field_matches_the_postings_based_there_not_boilerplate(
    oxmere: Opened, oxmere_index: SearchIndex, oxmere_postings: list[dict[str, Any]]
) -> None:
    town = "Brackenholt"
    based = {p["id"] for p in oxmere_postings if p["location"] == town}
    result = oxmere.expand(f"kp {town.lower()}", DEFAULTS.with_request(places="field"))
    place = next(s for s in result.segments if s.kind == "place")
    assert place.field == "location" and not place.expansions  # a name is never expanded
    assert f'+location:"{town}"^1' in result.query_text  # as the dump writes it, in its field
    # tantivy: the field clause matches exactly the postings based in the town; the same name in
    # the free text also matches the agency paragraphs that list every town they cover.
    assert oxmere_index.matching(f'location:"{town}"') == based
    in_text = oxmere_index.matching(f'"{town.lower()}"')
    assert based <= in_text and len(in_text - based) > len(based)
    # The whole query, by default (match=all), finds only postings based there...
    found = oxmere_index.matching(result.query_text)
    assert found and found <= based
    # ...and with match=job the town only ranks: postings elsewhere are found too.
    loose = oxmere.expand(f"kp {town.lower()}", DEFAULTS.with_request(places="field", match="job"))
    assert "+location" not in loose.query_text and oxmere_index.matching(loose.query_text) - based


def test_an_employer_is_its_own_kind_and_names_its_field(
    oxmere: Opened, oxmere_index: SearchIndex, oxmere_postings: list[dict[str, Any]]
) -> None:
    employer = "Bay Coaches Oxmere"
    result = oxmere.expand(f"{employer.lower()} coach driver", DEFAULTS.with_request(places="field"))
    named = next(s for s in result.segments if s.kind == "employer")
    assert named.field == "employer" and named.text == employer.lower() and not named.expansions
    assert f'+employer:"{employer}"^1' in result.query_text
    theirs = {p["id"] for p in oxmere_postings if p["employer"] == employer}
    assert oxmere_index.matching(f'employer:"{employer}"') == theirs
    # Field names are configuration: an index that calls the field otherwise is asked by its name.
    renamed = DEFAULTS.model_copy(update={"places": "field", "field_names": {"employer": "hirer"}})
    assert f'+hirer:"{employer}"^1' in oxmere.expand(f"{employer.lower()} coach driver", renamed).query_text


# -- shift patterns ------------------------------------------------------------------------------


@pytest.mark.parametrize("board", ["tollbridge", "oxmere"])
def test_a_pattern_matches_only_its_own_spellings_that_the_dump_uses(
    board: str, request: pytest.FixtureRequest
) -> None:
    lex: Opened = request.getfixturevalue(board)
    learned = lex.lexicon.pattern_spellings(DEFAULTS)  # spelling key -> pattern, configured and found in the dump
    checked = 0
    for name, spellings in DEFAULTS.patterns.items():
        own = {s for key, n in learned.items() if n == name for s in [key.replace("_", " ")]}
        others = {key.replace("_", " ") for key, n in learned.items() if n != name}
        for spelling in spellings:
            result = lex.expand(f"{spelling} care assistant", DEFAULTS)
            pattern = next((s for s in result.segments if s.kind == "pattern"), None)
            assert pattern is not None and pattern.pattern == name, (spelling, result.segments)
            offered = {e.phrase for e in pattern.expansions}
            assert {e.source for e in pattern.expansions} <= {"pattern"}
            assert offered <= own - {spelling} and not offered & others, (spelling, offered)
            # Only spellings the dump uses: every word of each is in the bundle's vocabulary.
            index = lex.lexicon.index
            assert all(all(w in index for w in s.split(" ")) or s.replace(" ", "_") in index for s in offered)
            checked += bool(offered)
    assert checked >= 3, "too few patterns had another spelling in the dump to check anything"
    # A configured spelling the dump never uses is never offered.
    odd = {**DEFAULTS.patterns, "nights": (*DEFAULTS.patterns["nights"], "moonlit rota")}
    nights = lex.expand("nights care assistant", DEFAULTS.model_copy(update={"patterns": odd}))
    assert all(e.phrase != "moonlit rota" for s in nights.segments for e in s.expansions)


def test_a_pattern_spelled_otherwise_is_found_through_tantivy(oxmere: Opened, oxmere_index: SearchIndex) -> None:
    result = oxmere.expand("temp receptionist", DEFAULTS)
    pattern = next(s for s in result.segments if s.kind == "pattern")
    assert pattern.pattern == "temporary" and "temporary" in {e.phrase for e in pattern.expansions}
    only_spelled_otherwise = oxmere_index.matching('+"receptionist" +"temporary"') - oxmere_index.matching('"temp"')
    assert only_spelled_otherwise and only_spelled_otherwise <= oxmere_index.matching(result.query_text)


# -- spelling ------------------------------------------------------------------------------------


def test_the_edit_distance_is_optimal_string_alignment() -> None:
    # Worked example of the Wikipedia article "Damerau-Levenshtein distance" (from memory): the
    # optimal string alignment distance of "CA" and "ABC" is 3 (the unrestricted Damerau-Levenshtein
    # distance is 2); a swap of two neighbouring letters is one edit, where Levenshtein counts two.
    assert distance.OSA.distance("CA", "ABC") == 3
    assert distance.OSA.distance("pcaker", "packer") == 1 and distance.Levenshtein.distance("pcaker", "packer") == 2


def test_a_typo_gets_a_correction_weighted_below_the_seekers_word(tollbridge: Opened) -> None:
    result = tollbridge.expand("bookkeepper", DEFAULTS, explain=True)
    (segment,) = result.segments
    assert segment.text == "bookkeepper" and segment.corrected == "bookkeeper"
    first = segment.expansions[0]
    assert (first.phrase, first.source, first.weight) == ("bookkeeper", "spelling", DEFAULTS.spelling_weight)
    assert result.query_text.startswith('+("bookkeepper"^1 OR "bookkeeper"^0.8')
    # Every neighbour of the corrected word weighs less than the correction.
    assert all(e.weight < first.weight for e in segment.expansions[1:])
    # A typo inside a title: one segment, the title corrected as a whole.
    (inside,) = tollbridge.expand("picker pcaker", DEFAULTS).segments
    assert inside.corrected == "picker packer" and inside.kind == "phrase"


def test_a_reviewer_blocks_a_correction_like_any_expansion(store_copy: Path) -> None:
    lex = open_store(store_copy)
    decisions = open_decision_store(Store(store_copy))
    decisions.add("bookkeepper", "block", "reviewer-ana", neighbour="bookkeeper")
    result = lex.expand("bookkeepper", DEFAULTS, decisions.snapshot(), explain=True)
    (segment,) = result.segments
    assert all(e.source != "spelling" for e in segment.expansions)
    assert result.query_text == '+"bookkeepper"^1'  # the typed word alone, as the reviewer asked
    assert [d.reason for d in segment.dropped or [] if d.phrase == "bookkeeper"] == ["blocked"]


def test_known_words_are_never_corrected(tollbridge: Opened) -> None:
    words = sorted(k for k in tollbridge.lexicon.keys if k.isalpha() and len(k) >= 5)
    assert len(words) > 500
    for word in words:
        (segment,) = tollbridge.expand(word, DEFAULTS).segments
        assert segment.corrected is None, word
    assert tollbridge.cache.speller().correct("nurs") is None  # four letters: too short to guess


@pytest.mark.parametrize("board", ["tollbridge", "oxmere"])
def test_no_correctly_spelled_demo_query_changes_with_spelling_on(board: str, request: pytest.FixtureRequest) -> None:
    lex: Opened = request.getfixturevalue(board)
    folder: Path = request.getfixturevalue("demo_dir" if board == "tollbridge" else "oxmere_dir")
    queries = [q["query"] for q in _rows(folder, "queries.jsonl") if q["kind"] != "typo"]
    off = DEFAULTS.model_copy(update={"spelling": False})
    assert len(queries) > 150
    for q in queries:
        on = lex.expand(q, DEFAULTS)
        assert on.full_query == lex.expand(q, off).full_query, q
        assert all(s.corrected is None for s in on.segments), q
    # and the typo queries do change: the check above is not vacuous.
    typos = [q["query"] for q in _rows(folder, "queries.jsonl") if q["kind"] == "typo"]
    assert any(any(s.corrected for s in lex.expand(q, DEFAULTS).segments) for q in typos)


# -- titles stay whole -------------------------------------------------------------------------


@pytest.mark.parametrize("board", ["tollbridge", "oxmere"])
def test_every_title_of_the_board_is_one_job_segment(board: str, request: pytest.FixtureRequest) -> None:
    lex: Opened = request.getfixturevalue(board)
    folder: Path = request.getfixturevalue("demo_dir" if board == "tollbridge" else "oxmere_dir")
    truth = json.loads((folder / "truth.json").read_text(encoding="utf-8"))
    titles = sorted({t for f in truth["families"] for t in f["equivalent"] if " " in t})
    assert len(titles) > 50
    for title in titles:
        segments = lex.expand(title, DEFAULTS).segments
        jobs = [s for s in segments if s.kind not in ("modifier",)]
        # Leading modifiers may stand apart ("trainee" + "dental nurse"); the job is one segment.
        assert len(jobs) == 1 and jobs[0].kind in ("phrase", "term"), (title, segments)
        assert all(s.kind == "modifier" for s in segments[: segments.index(jobs[0])]), (title, segments)


def test_a_head_word_beside_another_job_word_is_not_expanded_to_a_narrower_job(tollbridge: Opened) -> None:
    alone = tollbridge.expand("chef", DEFAULTS)
    narrower = {e.phrase for e in alone.segments[0].expansions if "chef" in e.phrase.split(" ")}
    assert narrower, "'chef' alone keeps no narrower chef title: nothing to check"
    # Two job words side by side, each on its own (compose_runs = 0; by default they are one composed span).
    both = tollbridge.expand("kitchen chef", DEFAULTS.model_copy(update={"compose_runs": 0}), explain=True)
    head = next(s for s in both.segments if s.text == "chef")
    # "kitchen" names no chef title: every narrower title of "chef" is dropped for the whole query.
    assert not {e.phrase for e in head.expansions} & narrower
    reasons = {d.phrase: d.reason for d in head.dropped or []}
    assert all(reasons.get(p) in ("narrower_than_query", "off_query") for p in narrower), reasons


# -- the relation hint where there are no duties ---------------------------------------------------


@pytest.mark.parametrize("board", ["tollbridge", "oxmere"])
def test_a_neighbour_without_duties_is_closer_than_different_jobs_are(
    board: str, request: pytest.FixtureRequest
) -> None:
    lex: Opened = request.getfixturevalue(board)
    apart = lex.cache.different_jobs_cosine(DEFAULTS)
    assert apart is not None and -1.0 < apart < 1.0
    floor = max(apart, DEFAULTS.min_similarity)
    checked = 0
    for word in ("chef", "driver", "nurse", "carer", "cleaner", "porter", "assistant", "warehouse"):
        if word not in lex.lexicon.index:
            continue
        for segment in lex.expand(word, DEFAULTS).segments:
            for e in segment.expansions:
                if e.source in ("model", "composed"):
                    checked += 1
                    assert e.similarity >= floor - 1e-6, (word, e)
                    assert lex.lexicon.has_duties(lex.lexicon.index[e.phrase.replace(" ", "_")]), (word, e)  # a title
    assert checked or board == "oxmere"


# -- the whole query in the engine ---------------------------------------------------------------


def test_the_whole_query_never_finds_fewer_postings_than_the_bag_of_words(
    oxmere: Opened, oxmere_index: SearchIndex, oxmere_dir: Path
) -> None:
    queries = _rows(oxmere_dir, "queries.jsonl")
    sample = [q["query"] for q in queries if q["kind"] != "title"][::3]
    assert len(sample) > 30
    for q in sample:
        result = oxmere.expand(q, DEFAULTS.with_request(places="field"))
        words = oxmere_index.matching(words_text(result))
        assert words <= oxmere_index.matching(result.full_query), q


def test_job_words_that_name_no_known_title_are_read_as_one_title(tollbridge: Opened) -> None:
    """A run of job words the bundle knows no title for ("kitchen chef") is one span, searched by its
    words: what it keeps are titles with its head word (a chef), never another kind of job."""
    (span,) = tollbridge.expand("kitchen chef", DEFAULTS).segments
    assert span.kind == "unknown" and span.text == "kitchen chef"
    assert span.expansions and all(e.phrase.split(" ")[-1] == "chef" for e in span.expansions)
    assert tollbridge.expand("kitchen chef", DEFAULTS).query_text.startswith('+("kitchen chef"^1 OR ')
