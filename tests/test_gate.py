"""The promotion gate: a worse candidate is refused and kept as rejected, --force is recorded, search impact
against the serving bundle, inputs checked before any work."""

from __future__ import annotations

from pathlib import Path

from tests.helpers import BROKEN, demo_config, train_quietly
from widen.cli import main
from widen.decisions.decision import DecisionSet
from widen.errors import EXIT_REFUSED
from widen.evaluation.index import SearchIndex
from widen.evaluation.runs import evaluate, read_queries
from widen.expansion.lexicon import Lexicon
from widen.model.store import Store

# A model that cannot have learned anything: one epoch at a learning rate near zero, and no duties
# (a title's duties are counted from the corpus, so they would still find its other names).


def test_gate_refuses_a_worse_candidate_and_keeps_it_as_rejected(store_copy: Path, demo_dir: Path) -> None:
    store = Store(store_copy)
    serving = store.current_version()
    outcome = train_quietly(demo_dir / "postings.jsonl", store_copy, demo_config(demo_dir, **BROKEN))
    assert not outcome.promoted and outcome.exit_code == EXIT_REFUSED
    assert any("below the serving bundle" in r or "below the floor" in r for r in outcome.gate.reasons)
    assert store.current_version() == serving
    statuses = {i.version: i.status for i in store.listing()}
    assert statuses[outcome.version] == "rejected" and statuses[serving or ""] == "current"


def test_force_promotes_a_refused_candidate_and_records_it(store_copy: Path, demo_dir: Path) -> None:
    outcome = train_quietly(demo_dir / "postings.jsonl", store_copy, demo_config(demo_dir, **BROKEN), force=True)
    store = Store(store_copy)
    assert outcome.promoted and store.current_version() == outcome.version
    gate = store.manifest(outcome.version).gate
    assert gate is not None and gate.forced is True
    assert store.read_journal()[-1]["forced"] is True


def test_gate_on_search_impact_compares_with_the_serving_bundle(store_copy: Path, demo_dir: Path) -> None:
    impact = {"gate.queries": str(demo_dir / "queries.jsonl"), "gate.postings": str(demo_dir / "open_postings.jsonl")}
    # Another seed moves a near pair or two of the pair gate, which is not what this test is about.
    impact["gate.tolerance"] = 0.05  # type: ignore[assignment]
    outcome = train_quietly(
        demo_dir / "postings.jsonl", store_copy, demo_config(demo_dir, **impact, **{"embedding.seed": 3})
    )
    gate = Store(store_copy).manifest(outcome.version).gate
    assert gate is not None
    details = gate.details["impact"]
    assert set(details["candidate"]) == {"recall@100", "ndcg@10", "exact_first"}
    assert details["current"] is not None
    assert outcome.promoted, outcome.gate.reasons
    # The gate's figures are widen evaluate's own for the candidate, on the same queries and postings.
    lexicon = Lexicon(Store(store_copy).open_bundle(outcome.version))
    index = SearchIndex(demo_dir / "open_postings.jsonl", Store(store_copy).search_indexes)
    queries = read_queries(demo_dir / "queries.jsonl")
    report = evaluate(lexicon, DecisionSet(), index, queries, lexicon.options, methods=("all_required", "widen"))
    assert details["candidate"] == {k: report["methods"]["widen"][k] for k in details["candidate"]}
    # A model that learned nothing expands to noise: the impact gate refuses it too.
    broken = train_quietly(demo_dir / "postings.jsonl", store_copy, demo_config(demo_dir, **impact, **BROKEN))
    assert not broken.promoted
    assert any(r.startswith("search impact:") for r in broken.gate.reasons), broken.gate.reasons
    assert Store(store_copy).current_version() == outcome.version


def test_gate_refuses_a_slightly_worse_model(tmp_path: Path, demo_dir: Path) -> None:
    # One worker thread, so both trainings are repeatable. The serving model scores 0.989 on the demo
    # pairs; the candidate learns no title phrases (title_min_count beyond any title), so three-word
    # titles ("class 1 driver") are no entries of its own: 0.800. It learned, it is above the floor of
    # 0.5, it is only worse, and the gate keeps the better model serving.
    base = {"embedding.workers": 1, "corpus.workers": 1}
    serving = train_quietly(demo_dir / "postings.jsonl", tmp_path, demo_config(demo_dir, **base))
    assert serving.promoted and serving.gate.score is not None
    worse_config = demo_config(demo_dir, **base, **{"phrases.title_min_count": 10**9})
    worse = train_quietly(demo_dir / "postings.jsonl", tmp_path, worse_config)
    assert worse.gate.score is not None and 0.5 < worse.gate.score < serving.gate.score - 0.02
    assert not worse.promoted and worse.exit_code == EXIT_REFUSED
    assert [r for r in worse.gate.reasons if "below the serving bundle" in r] == worse.gate.reasons
    assert Store(tmp_path).current_version() == serving.version


def test_gate_queries_file_is_checked_before_any_work(tmp_path: Path, demo_dir: Path) -> None:
    bad = tmp_path / "queries.jsonl"
    bad.write_text("{not a query}\n", encoding="utf-8")
    config = tmp_path / "c.toml"
    config.write_text(f'[gate]\nqueries = "{bad}"\n', encoding="utf-8")
    args = [
        "train",
        "--corpus",
        str(demo_dir / "postings.jsonl"),
        "--store",
        str(tmp_path / "s"),
        "--config",
        str(config),
    ]
    assert main(args) == 2
