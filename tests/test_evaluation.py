"""Search impact: every method against trec_eval itself (pytrec-eval-terrier) on the same run files, the
metrics on published worked examples, the significance test against exact enumeration, and both boards."""

from __future__ import annotations

import itertools
import json
import math
import shutil
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import pytrec_eval

from tests.helpers import open_store
from widen.cli import main
from widen.decisions.decision import DecisionSet
from widen.evaluation.index import SearchIndex
from widen.evaluation.methods import METHODS, CuratedList, bag_of_words_text
from widen.evaluation.metrics import ndcg_at, recall_at, reciprocal_rank, trec_order
from widen.evaluation.report import write_report
from widen.evaluation.runs import _exact_first, evaluate, read_queries
from widen.evaluation.scorecard import scorecard
from widen.evaluation.significance import paired_randomisation
from widen.expansion.lexicon import Lexicon
from widen.expansion.query_text import merged_text
from widen.model.store import Store


def _read_run(path: Path) -> dict[str, dict[str, float]]:
    run: dict[str, dict[str, float]] = {}
    for line in path.read_text(encoding="utf-8").splitlines():
        qid, _, doc, _, score, _ = line.split()
        run.setdefault(qid, {})[doc] = float(score)
    return run


def _read_qrels(path: Path) -> dict[str, dict[str, int]]:
    qrels: dict[str, dict[str, int]] = {}
    for line in path.read_text(encoding="utf-8").splitlines():
        qid, _, doc, grade = line.split()
        qrels.setdefault(qid, {})[doc] = int(grade)
    return qrels


def _evaluated(store: Path, board: Path, out: Path, folder: Path) -> tuple[dict[str, Any], Path]:
    queries = read_queries(board / "queries.jsonl")
    lexicon = Lexicon(Store(store).open_bundle())
    # Tagged with the bundle's concepts, as `widen evaluate` does: every method, the concept ones too.
    index = SearchIndex(board / "open_postings.jsonl", folder, tagger=lexicon)
    truth = json.loads((board / "truth.json").read_text(encoding="utf-8"))
    report = evaluate(lexicon, DecisionSet(), index, queries, lexicon.options, truth=truth)
    write_report(report, out, lexicon.version, truth["board"])
    return report, out


@pytest.fixture(scope="module")
def evaluated(
    trained_store: Path, demo_dir: Path, tmp_path_factory: pytest.TempPathFactory
) -> tuple[dict[str, Any], Path]:
    return _evaluated(trained_store, demo_dir, tmp_path_factory.mktemp("eval"), tmp_path_factory.mktemp("index"))


@pytest.fixture(scope="module")
def evaluated_oxmere(
    oxmere_store: Path, oxmere_dir: Path, tmp_path_factory: pytest.TempPathFactory
) -> tuple[dict[str, Any], Path]:
    return _evaluated(oxmere_store, oxmere_dir, tmp_path_factory.mktemp("eval2"), tmp_path_factory.mktemp("index2"))


@pytest.mark.parametrize("board", ["evaluated", "evaluated_oxmere"])
def test_every_method_equals_trec_eval_on_the_same_run_files(board: str, request: pytest.FixtureRequest) -> None:
    report, out = request.getfixturevalue(board)
    qrels = _read_qrels(out / "qrels.txt")
    # Reference implementation: trec_eval, through pytrec-eval-terrier. Its names: recall_k,
    # ndcg_cut_10 (gain = grade, log2 discount), recip_rank; relevance is grade >= 1.
    evaluator = pytrec_eval.RelevanceEvaluator(qrels, {"recall.10,100", "ndcg_cut.10", "recip_rank"})
    rows = {r["id"]: r for r in report["_rows"]}
    assert set(report["methods"]) == set(METHODS)
    checked = 0
    for name in METHODS:
        reference = evaluator.evaluate(_read_run(out / f"{name}.run"))
        for qid, ref in reference.items():
            ours = rows[qid][name]
            assert math.isclose(ours["recall@10"], ref["recall_10"], abs_tol=1e-4), (name, qid)
            assert math.isclose(ours["recall@100"], ref["recall_100"], abs_tol=1e-4), (name, qid)
            assert math.isclose(ours["ndcg@10"], ref["ndcg_cut_10"], abs_tol=1e-4), (name, qid)
            assert math.isclose(ours["mrr"], ref["recip_rank"], abs_tol=1e-4), (name, qid)
            checked += 1
        # A query with nothing retrieved scores 0 and still counts in the mean (trec_eval -c).
        for qid in set(qrels) - set(reference):
            assert rows[qid][name]["ndcg@10"] == 0.0 and rows[qid][name]["mrr"] == 0.0
        mean_ndcg = sum(v["ndcg_cut_10"] for v in reference.values()) / len(qrels)
        assert math.isclose(report["methods"][name]["ndcg@10"], mean_ndcg, abs_tol=1e-4)
    assert checked >= 8 * 150


def test_dcg_and_ndcg_on_a_published_worked_example() -> None:
    # The worked example of the Wikipedia article "Discounted cumulative gain" (values from memory):
    # graded relevance 3, 2, 3, 0, 1, 2 in ranked order gives DCG_6 = 6.861; with two more judged
    # documents of grades 3 and 2, the ideal order 3, 3, 3, 2, 2, 2 gives IDCG_6 = 8.740, nDCG_6 = 0.785.
    grades = [3, 2, 3, 0, 1, 2]
    ranked = [f"d{i}" for i in range(6)]
    relevant = {f"d{i}": g for i, g in enumerate(grades) if g} | {"d6": 3, "d7": 2}
    dcg = sum(g / math.log2(i + 2) for i, g in enumerate(grades))
    assert round(dcg, 3) == 6.861
    assert round(ndcg_at(ranked, relevant, 6), 3) == 0.785
    # Hand-worked: relevant a (grade 2) and c (grade 1); ranking b, a, c.
    assert recall_at(["b", "a", "c"], {"a": 2, "c": 1}, 2) == 0.5
    assert reciprocal_rank(["b", "a", "c"], {"a": 2, "c": 1}) == 0.5


def test_tied_scores_are_ranked_as_trec_eval_ranks_them() -> None:
    # trec_eval breaks a tie of scores by document id, descending; a different order would move nDCG.
    run = {"q": {"p-1": 2.0, "p-2": 2.0, "p-3": 2.0, "p-4": 1.0}}
    qrels = {"q": {"p-1": 2, "p-4": 1}}
    assert trec_order(run["q"]) == ["p-3", "p-2", "p-1", "p-4"]
    reference = pytrec_eval.RelevanceEvaluator(qrels, {"ndcg_cut.10"}).evaluate(run)["q"]["ndcg_cut_10"]
    assert math.isclose(ndcg_at(trec_order(run["q"]), qrels["q"], 10), reference, abs_tol=1e-6)
    assert not math.isclose(ndcg_at(["p-1", "p-2", "p-3", "p-4"], qrels["q"], 10), reference, abs_tol=1e-3)


def test_randomisation_test_equals_exact_enumeration() -> None:
    # Reference: the paired randomisation test worked out by enumerating all 2^n sign assignments.
    rng = np.random.default_rng(4)
    a, b = rng.uniform(size=9), rng.uniform(size=9)
    d = a - b
    observed = abs(d.mean())
    flips = [abs((d * np.array(signs)).mean()) for signs in itertools.product((1, -1), repeat=len(d))]
    exact = sum(f >= observed - 1e-12 for f in flips) / len(flips)
    assert math.isclose(paired_randomisation(a, b), exact, rel_tol=1e-9)
    assert paired_randomisation(a, a) == 1.0
    assert paired_randomisation(a + 1.0, a) < 0.01


def test_exact_first_is_computed_for_every_method(evaluated: tuple[dict[str, Any], Path]) -> None:
    report, _ = evaluated
    assert _exact_first(["a", "b", "x", "y"], {"a", "b"}) and not _exact_first(["a", "x", "b"], {"a", "b"})
    assert _exact_first([], {"a"}) and _exact_first(["x"], set())
    # Requiring every segment retrieves only exact matches; the bag of words lets partial matches
    # (any one word) outrank them, which a front end would notice.
    assert report["methods"]["all_required"]["exact_first"] == 1.0
    assert report["methods"]["bag_of_words"]["exact_first"] < 0.95
    assert report["methods"]["widen"]["exact_first"] >= 0.95


def test_report_has_every_method_kind_and_significance(
    evaluated_oxmere: tuple[dict[str, Any], Path], oxmere_dir: Path
) -> None:
    _, out = evaluated_oxmere
    for name in ("report.json", "report.md", "qrels.txt", "widen.run", "recall_at_k.png", "recall_by_kind.png"):
        assert (out / name).stat().st_size > 0
    assert (out / "recall_at_k.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    saved = json.loads((out / "report.json").read_text())
    assert saved["board"] == "Oxmere Bay Work"
    assert set(saved["kinds"]) == {"title", "town", "noise", "shift", "typo"}
    for kind in ("noise", "shift", "typo"):
        assert saved["kinds"][kind]["base_queries"] >= 5
    p = saved["significance"]["p"]
    assert set(p) == set(METHODS) - {"bag_of_words"} and all(0.0 < v["ndcg@10"] <= 1.0 for v in p.values())
    markdown = (out / "report.md").read_text()
    assert all(f"| {m}: " in markdown for m in METHODS)
    # Queries whose relevant postings are all outside the open postings are left out, and counted.
    assert saved["queries"] + saved["left_out"] == len(read_queries(oxmere_dir / "queries.jsonl"))
    assert saved["queries"] > 150


def test_relevance_counts_only_the_postings_the_index_holds(
    trained_store: Path, demo_dir: Path, tmp_path: Path
) -> None:
    queries = read_queries(demo_dir / "queries.jsonl")
    whole = SearchIndex(demo_dir / "postings.jsonl", tmp_path, days=None)
    week = SearchIndex(demo_dir / "postings.jsonl", tmp_path, days=7)
    assert week.ids < whole.ids and len(week.ids) == sum(1 for _ in (demo_dir / "open_postings.jsonl").open())
    lexicon = Lexicon(Store(trained_store).open_bundle())
    small = evaluate(lexicon, DecisionSet(), week, queries[:40], lexicon.options, methods=("bag_of_words",))
    for qid, relevant in small["_qrels"].items():
        assert set(relevant) <= week.ids and any(g >= 1 for g in relevant.values()), qid


def test_curated_list_replaces_neighbours_with_the_truth(trained_store: Path, demo_dir: Path) -> None:
    truth = json.loads((demo_dir / "truth.json").read_text())
    curated = CuratedList(truth)
    lexicon = Lexicon(Store(trained_store).open_bundle())
    result = open_store(trained_store).expand("lorry driver jobs hensby")
    text = curated.query_text(result, lexicon.options.with_request(places="field"), lexicon.names)
    # The job's group holds the list's titles in place of the neighbours; the place stays as widen
    # writes it (here in its field, required); the noise word has no clause, as in widen's own query.
    assert text == (
        '+("lorry driver"^1 OR "hgv driver"^0.5 OR "class 1 driver"^0.5 OR "c+e driver"^0.5 OR "truck driver"^0.5)'
        ' +location:"Hensby"^1'
    )


def test_bag_of_words_is_every_word_optional_and_unparseable_input_stays_text() -> None:
    assert bag_of_words_text("Lorry Driver jobs") == '"lorry" "driver" "jobs"'
    assert bag_of_words_text('"title:rn" AND (x') == '"title" "rn" "and" "x"'  # no field, no operator


def test_cli_evaluate_reuses_the_index_and_draws_the_window_curve(
    trained_store: Path, demo_dir: Path, tmp_path: Path
) -> None:
    store = tmp_path / "store"
    shutil.copytree(trained_store, store)
    queries = tmp_path / "q.jsonl"
    queries.write_text("".join((demo_dir / "queries.jsonl").read_text().splitlines(keepends=True)[:30]))
    args = ["evaluate", "--store", str(store), "--queries", str(queries), "--truth", str(demo_dir / "truth.json")]
    assert main([*args, "--postings", str(demo_dir / "open_postings.jsonl"), "--out", str(tmp_path / "a")]) == 0
    built = sorted((store / "search-index").iterdir())
    assert main([*args, "--postings", str(demo_dir / "open_postings.jsonl"), "--out", str(tmp_path / "b")]) == 0
    assert sorted((store / "search-index").iterdir()) == built
    windows = ["--postings", str(demo_dir / "postings.jsonl"), "--days", "7,30", "--out", str(tmp_path / "c")]
    assert main([*args, *windows]) == 0
    curve = json.loads((tmp_path / "c" / "windows.json").read_text())
    assert list(curve) == ["7", "30"] and curve["7"]["postings"] < curve["30"]["postings"]
    assert (tmp_path / "c" / "window_curve.png").read_bytes()[:4] == b"\x89PNG"
    assert main([*args, "--postings", str(demo_dir / "postings.jsonl"), "--out", str(tmp_path / "d"), "--k", "0"]) == 2
    assert main([*args, *windows, "--rm3", "10,10"]) == 2


def test_merged_text_is_the_baseline_boosted_or_the_query_text() -> None:
    assert (
        merged_text('"rn"^1', '("rn"^1 OR "staff nurse"^0.4)', 10) == '("rn"^1)^10 OR (("rn"^1 OR "staff nurse"^0.4))'
    )
    assert merged_text('"rn"^1', '"rn"^1', 0) == '"rn"^1'


# -- the targets of the seeker-queries issue, on both boards at the test suite's size -------------------
# Thresholds and defaults were chosen on Tollbridge Valley; Oxmere Bay is where they are reported.


@pytest.mark.parametrize("board", ["evaluated", "evaluated_oxmere"])
def test_widen_beats_the_bag_of_words_and_rm3_with_exact_matches_first(
    board: str, request: pytest.FixtureRequest
) -> None:
    report, _ = request.getfixturevalue(board)
    m = report["methods"]
    for metric in ("recall@100", "ndcg@10"):
        for peer in ("bag_of_words", "rm3", "rm3_merged"):
            assert m["widen"][metric] > m[peer][metric], (metric, peer, m["widen"][metric], m[peer][metric])
    assert m["widen"]["exact_first"] >= 0.95
    assert m["bag_of_words"]["exact_first"] < 0.95  # what the merge is for
    for kind, entry in report["kinds"].items():
        assert entry["methods"]["widen"]["exact_first"] >= 0.95, kind


@pytest.mark.parametrize("board", ["evaluated", "evaluated_oxmere"])
def test_seeker_typed_queries_keep_their_recall(board: str, request: pytest.FixtureRequest) -> None:
    report, _ = request.getfixturevalue(board)
    kinds = report["kinds"]
    # The same queries without the noise words, spelled right, or without the shift pattern.
    assert kinds["noise"]["ratio_to_base"]["widen"]["recall@100"] >= 0.9
    assert kinds["typo"]["ratio_to_base"]["widen"]["recall@100"] >= 0.5
    shift = kinds["shift"]["methods"]["widen"]["recall@100"]
    assert shift >= 0.5 * kinds["title"]["methods"]["widen"]["recall@100"]


def test_the_relation_hint_holds_on_the_board_it_was_not_tuned_on(oxmere_store: Path, oxmere_dir: Path) -> None:
    lexicon = Lexicon(Store(oxmere_store).open_bundle())
    truth = json.loads((oxmere_dir / "truth.json").read_text(encoding="utf-8"))
    card = scorecard(lexicon, truth, lexicon.options)
    assert card["equivalent_hints"] >= 30  # the hint is used, not only right when silent
    assert card["equivalent_precision"] >= 0.8, card
    assert card["same_job"] >= 0.6, card
