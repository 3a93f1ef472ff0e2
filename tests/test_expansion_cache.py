"""What expansion keeps between queries never changes an answer: the kept answers against the reference,
the response cache, the result models built without validation."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.helpers import NONE, Opened, decided, open_store
from widen.expansion.expand import prepare
from widen.expansion.options import ExpansionOptions
from widen.expansion.result import ExpansionResult
from widen.text.forms import phrase_of_key

DEFAULTS = ExpansionOptions()


def test_response_cache_is_an_lru_keyed_on_decisions(demo: Opened) -> None:
    from service.cache import ResultCache

    cache: ResultCache[ExpansionResult] = ResultCache(2)
    first = demo.expand("kitchen porter", DEFAULTS)
    cache.put((demo.lexicon.version, 0, "kitchen porter"), first)
    assert cache.get((demo.lexicon.version, 0, "kitchen porter")) is first
    # A change of decisions is a new key, never a stale hit.
    assert cache.get((demo.lexicon.version, 7, "kitchen porter")) is None
    assert (cache.hits, cache.misses) == (1, 1)
    cache.put((demo.lexicon.version, 0, "rn"), demo.expand("rn", DEFAULTS))
    cache.get((demo.lexicon.version, 0, "kitchen porter"))  # now the most recently used
    cache.put((demo.lexicon.version, 0, "kp"), demo.expand("kp", DEFAULTS))  # evicts the least: "rn"
    assert cache.get((demo.lexicon.version, 0, "rn")) is None
    assert cache.get((demo.lexicon.version, 0, "kitchen porter")) is first
    assert ResultCache(0).get("anything") is None


def test_what_is_worked_out_once_never_changes_a_result(trained_store: Path, demo_dir: Path) -> None:
    """The fast path (a lexicon that keeps what depends on the bundle alone, having served every set of
    options in turn) against the reference (`keep_answers=False`: every call works everything out): the
    JSON of every third demo query and of 300 distinct queries of the day's log is byte-identical,
    explained or not, with and without reviewer decisions, for five sets of options."""
    queries = [json.loads(line)["query"] for line in (demo_dir / "queries.jsonl").open(encoding="utf-8")][::3]
    logged = dict.fromkeys(json.loads(line)["q"] for line in (demo_dir / "query_log.jsonl").open(encoding="utf-8"))
    queries += [*list(logged)[:300], "lorry driver", "kitchen chef hensby", '"staff nurse" nights', "senior carer p/t"]
    queries += ["staff nurse", "kitchen porter", "chef", "Staff  Nurse"]  # decided alone, and spelled otherwise
    said = decided()
    fast = open_store(trained_store)
    reference = fast.reference()
    queries += [phrase_of_key(key) for key in fast.lexicon.keys[::25]]  # typed alone: answered whole from `prepare`
    base = fast.options
    # As the service does before serving: every entry and every title (those with no vector too).
    assert prepare(fast.lexicon, fast.cache, base) == len(set(fast.lexicon.keys) | set(fast.lexicon.titles))
    option_sets = [
        base,
        base.with_request(min_similarity=0.8),
        base.with_request(strict=True, max=2),
        base.with_request(match="job", places="field"),
        ExpansionOptions.model_validate({**base.model_dump(), "chance_neighbours": 5.0, "related_duties": 0.8}),
    ]
    answers: dict[tuple[int, str, int, bool], str] = {}
    for _ in range(2):  # the second round is served from what the first kept
        for n, options in enumerate(option_sets):
            for q in queries:
                for decisions in (NONE, said):
                    for explain in (False, True):
                        got = fast.expand(q, options, decisions, explain=explain).model_dump_json()
                        assert answers.setdefault((n, q, decisions.version, explain), got) == got
    assert fast.cache.answers() and not reference.cache.answers()
    # Most answers were joined from their spans' pieces (`widen.expansion.pieces`), the reference's all
    # worked out whole: the comparison below is between the two ways.
    assert len(fast.cache.pieces) > 100 and not reference.cache.pieces
    # A service that prepared only the busiest third of the entries (WIDEN_PREPARE_ENTRIES) answers alike.
    partial = open_store(trained_store)
    third = len(partial.lexicon.keys) // 3
    assert prepare(partial.lexicon, partial.cache, base, third) == third
    for (n, q, version, explain), got in answers.items():
        decisions = said if version else NONE
        assert reference.expand(q, option_sets[n], decisions, explain=explain).model_dump_json() == got, (n, q)
        if n in (0, 2):
            assert partial.expand(q, option_sets[n], decisions, explain=explain).model_dump_json() == got, (n, q)
    # The options that change the filters do change some answers, and so do the decisions (the
    # comparison above is between answers that differ, not one answer repeated).
    assert any(answers[0, q, 0, True] != answers[4, q, 0, True] for q in queries)
    assert any(answers[0, q, 0, True] != answers[0, q, 1, True] for q in queries)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    words=st.lists(
        st.sampled_from(
            [
                "staff",
                "nurse",
                "lorry",
                "driver",
                "kitchen",
                "porter",
                "chef",
                "hensby",
                "jobs",
                "near",
                "nights",
                "p/t",
                "temp",
                "senior",
                "carer",
                "bookkepper",
                "drvier",
                "xq",
                '"',
                "q++",
            ]
        ),
        min_size=1,
        max_size=6,
    )
)
def test_fast_path_equals_the_reference_on_generated_queries(demo: Opened, words: list[str]) -> None:
    """Hypothesis-generated queries from job words, places, patterns, noise, typos and junk: the kept
    answers equal the reference's, with and without decisions."""
    reference = demo.reference()
    query = " ".join(words)
    for decisions in (NONE, decided()):
        for explain in (True, False):
            for _ in range(2):
                fast = demo.expand(query, demo.options, decisions, explain=explain).model_dump_json()
                assert fast == reference.expand(query, demo.options, decisions, explain=explain).model_dump_json()


def test_built_makes_what_model_construct_makes(demo: Opened) -> None:
    """`built` skips model_construct's loop over the fields; the object must be the same as the one
    model_construct makes (pydantic's own constructor is the reference): fields, fields set, extras,
    equality and JSON, for every model built on each request, and model_construct's when a field is missing."""
    from widen.expansion.result import Clause, ModelInfo, Segment

    result = demo.expand("night shift staff nurse hensby", demo.options, explain=True)
    examples: list[tuple[Any, dict[str, object]]] = [
        (ModelInfo, {"version": "v1", "created_at": "2026-12-02T10:00:00Z"}),
        (Clause, {"phrase": "staff nurse", "weight": 1.0, "original": True, "segment": 1}),
        *[(Segment, dict(s)) for s in result.segments],
        (ExpansionResult, dict(result)),
    ]
    for model, values in examples:
        ours, theirs = model.built(**values), model.model_construct(**values)
        assert ours == theirs and type(ours) is model
        assert ours.__dict__ == theirs.__dict__ and list(ours.__dict__) == list(theirs.__dict__)
        assert ours.__pydantic_fields_set__ == theirs.__pydantic_fields_set__
        assert ours.__pydantic_extra__ == theirs.__pydantic_extra__
        assert ours.model_dump_json() == theirs.model_dump_json()
        assert model.model_validate_json(ours.model_dump_json()) == ours  # and it validates as it stands
    short = Segment.built(text="chef", kind="phrase")  # two fields given: model_construct fills the defaults
    assert short == Segment.model_construct(text="chef", kind="phrase") and short.expansions == []
