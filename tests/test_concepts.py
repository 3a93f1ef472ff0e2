"""Concepts: k-means clusters of what postings say, their tokens in the index, and their clauses in the query."""

from __future__ import annotations

import itertools
import json
import shutil
from pathlib import Path

import numpy as np
from fastapi.testclient import TestClient
from pydantic import SecretStr

from service.app import create_app
from service.settings import Settings
from tests.helpers import Opened, open_store, train_quietly, write_jsonl
from training.concepts import Previous, align, spherical_kmeans
from training.config import load_config
from widen.cli import main
from widen.decisions.decision import DecisionSet, PhraseDecisions
from widen.evaluation.index import SearchIndex
from widen.evaluation.runs import evaluate, read_queries
from widen.model.concepts import ConceptSet, unit_rows
from widen.model.store import Store


def _blobs(rng: np.random.Generator, k: int = 6, each: int = 80, d: int = 20) -> tuple[np.ndarray, np.ndarray]:
    centres = unit_rows(rng.normal(size=(k, d)))
    x = np.repeat(centres, each, axis=0) + rng.normal(scale=0.05, size=(k * each, d))
    return unit_rows(x), np.repeat(np.arange(k), each)


def test_spherical_kmeans_finds_well_separated_clusters_and_keeps_ids_from_a_warm_start() -> None:
    """Spherical k-means (Dhillon & Modha 2001) with k-means++ seeding (Arthur & Vassilvitskii 2007): clusters
    far apart are found exactly (each true cluster one label), and started from given centroids, cluster j
    stays cluster j."""
    rng = np.random.default_rng(3)
    x, truth = _blobs(rng)
    centroids, labels = spherical_kmeans(x, 6, rng, iterations=20)
    pairs = set(zip(truth.tolist(), labels.tolist(), strict=True))
    assert len(pairs) == 6 and len({t for t, _ in pairs}) == 6 and len({lab for _, lab in pairs}) == 6
    again, labels_again = spherical_kmeans(x, 6, rng, iterations=5, init=centroids)
    assert np.array_equal(labels_again, labels)
    assert np.allclose(np.linalg.norm(again, axis=1), 1.0, atol=1e-5)


def test_lloyd_iterations_never_lower_the_spherical_objective() -> None:
    """Each Lloyd step of spherical k-means does not lower the sum of the cosines of the rows to their
    centroids (Dhillon & Modha 2001, the monotone property of the algorithm)."""
    rng = np.random.default_rng(5)
    x = unit_rows(rng.normal(size=(400, 12)))
    start = x[rng.choice(len(x), 8, replace=False)]
    scores = []
    for steps in range(6):
        centroids, _ = spherical_kmeans(x, 8, rng, iterations=steps, init=start)
        scores.append(float(np.max(x @ centroids.T, axis=1).sum()))
    assert all(b >= a - 1e-4 for a, b in itertools.pairwise(scores)), scores
    assert scores[-1] > scores[0]


def test_alignment_is_the_orthogonal_procrustes_solution() -> None:
    """The turn between two nights' vectors is the orthogonal Procrustes solution, R = U V^T from the SVD of
    A^T B (Schoenemann 1966); a rotated copy of the vectors is turned back exactly."""
    rng = np.random.default_rng(7)
    old = unit_rows(rng.normal(size=(600, 16)))
    turn_q, _ = np.linalg.qr(rng.normal(size=(16, 16)))
    new = (old @ turn_q).astype(np.float32)
    keys = [f"w{i}" for i in range(600)]
    previous = Previous("v0", _empty_concepts(16), old, keys)
    turn = align(new, keys, np.ones(600), previous)
    assert turn is not None
    u, _, vt = np.linalg.svd(new.astype(np.float64).T @ old.astype(np.float64))
    assert np.allclose(turn, u @ vt, atol=1e-4)
    assert np.allclose(new @ turn, old, atol=1e-4)
    assert align(new[:50], keys[:50], np.ones(50), previous) is None  # too few shared entries


def _empty_concepts(d: int) -> ConceptSet:
    return ConceptSet((2,), np.zeros((2, d), np.float32), [[], []], "wc", "x", None, 1.0, 1e-3)


def test_a_bundle_has_concepts_named_by_their_postings_titles(demo: Opened) -> None:
    concepts = demo.lexicon.concepts
    assert concepts is not None and concepts.sizes == (32, 128, 512)
    assert concepts.centroids.shape == (32 + 128 + 512, demo.lexicon.normed.shape[1])
    assert np.allclose(np.linalg.norm(concepts.centroids, axis=1), 1.0, atol=1e-4)
    labelled = [label for label in concepts.labels if label]
    assert len(labelled) > 0.8 * len(concepts.labels)
    assert concepts.flat(concepts.token(2, 17)) == 32 + 128 + 17 and concepts.flat("zz9n1") is None


def test_tag_command_endpoint_and_index_give_the_same_tokens(
    demo: Opened, trained_store: Path, demo_dir: Path, tmp_path: Path
) -> None:
    """`widen tag` (streamed, skipping bad records), `/v1/concept-tokens` and the bundle itself tag alike."""
    rows = [json.loads(line) for line in (demo_dir / "open_postings.jsonl").read_text().splitlines()[:40]]
    dump = write_jsonl(tmp_path / "dump.jsonl", [*rows[:20], "{not json", *rows[20:]])
    out = tmp_path / "tags.jsonl"
    assert main(["tag", "--corpus", str(dump), "--store", str(trained_store), "--out", str(out)]) == 0
    assert not (tmp_path / "tags.jsonl.partial").exists()
    tagged = [json.loads(line) for line in out.read_text().splitlines()]
    assert [t["id"] for t in tagged] == [r["id"] for r in rows]
    direct = demo.lexicon.tag([(r["title"], r["description"]) for r in rows])
    assert [t["concepts"].split() for t in tagged] == direct
    assert all(len(t) == 3 for t in direct)
    with TestClient(create_app(Settings(store=str(trained_store)))) as client:
        body = {"postings": [{"id": r["id"], "title": r["title"], "description": r["description"]} for r in rows]}
        answer = client.post("/v1/concept-tokens", json=body)
        assert answer.status_code == 200
        got = answer.json()
        assert [p["tokens"] for p in got["postings"]] == direct
        assert got["lineage"] == demo.lexicon.concepts.lineage and got["field"] == "concepts"  # type: ignore[union-attr]
        too_many = {"postings": [{"id": str(n)} for n in range(1001)]}
        assert client.post("/v1/concept-tokens", json=too_many).status_code == 400
        # A batch as a pipeline sends it is far over the 64 KiB of the other endpoints: its own limit.
        whole = {"postings": [{**p, "id": f"{p['id']}-{n}"} for n in range(6) for p in body["postings"]]}
        assert len(json.dumps(whole)) > 64 * 1024
        assert client.post("/v1/concept-tokens", json=whole).status_code == 200
        assert client.post("/v1/expand/batch", content=json.dumps(whole)).status_code == 413
    bad = main(["tag", "--corpus", str(tmp_path / "none.jsonl"), "--store", str(trained_store)])
    assert bad == 2


def test_concept_clauses_weigh_less_than_every_word_and_parse_in_the_engine(
    demo: Opened, demo_dir: Path, tmp_path: Path
) -> None:
    """Concept clauses are boosted below every clause of the seeker's words and expansions; the query with them
    parses with tantivy's own parser and finds postings through the concept field; a blocked concept goes."""
    index = SearchIndex(demo_dir / "open_postings.jsonl", tmp_path / "index", tagger=demo.lexicon)
    options = demo.options.with_request(concepts=True)
    for query in ("kitchen porter", "night shift hgv driver hensby", "rn", "bookkepper"):
        result = demo.expand(query, options=options)
        assert result.concepts, query
        lightest = min(c.weight for c in result.clauses)
        assert all(c.weight < lightest for c in result.concepts)
        assert result.full_query.endswith(f"OR ({result.concept_text})")
        assert index.search(result.concept_text, 10), query  # tokens the index holds
        index.parse(result.full_query)
        index.parse(result.query_text)
    plain = demo.expand("kitchen porter")
    assert plain.concepts == [] and "concepts:" not in plain.full_query  # off unless asked
    first = demo.expand("kitchen porter", options=options).concepts[0].token
    blocked = DecisionSet(1, {"kitchen porter": PhraseDecisions(blocked=frozenset({first}))})
    again = demo.expand("kitchen porter", options=options, decisions=blocked)
    assert first not in {c.token for c in again.concepts} and again.concepts


def _days(dump: Path, out: Path, first: int, last: int) -> Path:
    """The postings of the dump posted on its days `first` to `last` (0: its first day)."""
    rows = [json.loads(line) for line in dump.read_text(encoding="utf-8").splitlines()]
    days = sorted({r["posted_at"][:10] for r in rows})
    kept = set(days[first : last + 1])
    return write_jsonl(out, [r for r in rows if r["posted_at"][:10] in kept])


def test_concepts_carry_over_to_the_next_nights_bundle(demo_dir: Path, tmp_path: Path) -> None:
    """Tonight's bundle continues last night's concepts (same lineage, ids kept), so the index tagged last
    night keeps matching. The issue's target (90% of postings keep every token) is measured at a board's
    size by bench/concepts.py (0.93-0.95 on 20k postings); on this 8k fixture, with 60 days' postings and
    sizes up to 512, we measured 0.89-0.92, so the floor here is 0.85: far above a new lineage's share
    (about 0.01 of postings keep every token when ids are not carried over). A bundle whose concepts are a
    new lineage is refused while concept clauses are on."""
    dump = demo_dir / "postings.jsonl"
    night_one = _days(dump, tmp_path / "one.jsonl", 0, 58)
    night_two = _days(dump, tmp_path / "two.jsonl", 1, 59)
    store = tmp_path / "store"
    first = train_quietly(night_one, store, load_config(None))
    second = train_quietly(night_two, store, load_config(None))
    assert first.promoted and second.promoted
    one, two = open_store(store, first.version), open_store(store, second.version)
    assert one.lexicon.concepts and two.lexicon.concepts
    assert two.lexicon.concepts.lineage == one.lexicon.concepts.lineage
    assert two.lexicon.concepts.continues == first.version
    shared = [json.loads(line) for line in night_two.read_text().splitlines()][:3000]
    pairs = [(r["title"], r["description"]) for r in shared]
    kept = np.mean([a == b for a, b in zip(one.lexicon.tag(pairs), two.lexicon.tag(pairs), strict=True)])
    assert kept >= 0.85, kept
    assert second.manifest.concepts["kept_share"] >= 0.85
    on = {"expansion.concepts": True, "concepts.sizes": [16, 64]}
    refused = train_quietly(night_two, store, load_config(None, on))
    assert not refused.promoted and any("new lineage" in r for r in refused.gate.reasons)
    assert Store(store).current_version() == second.version
    lineages = {i.version: i.concept_lineage for i in Store(store).listing()}  # what `widen bundles` shows
    assert lineages[first.version] == lineages[second.version] == one.lexicon.concepts.lineage
    assert lineages[refused.version] not in ("", lineages[second.version])
    # Last night's index still serves tonight's concept clauses (same lineage); a new lineage's does not.
    index = SearchIndex(demo_dir / "open_postings.jsonl", tmp_path / "index", tagger=one.lexicon)
    queries = read_queries(demo_dir / "queries.jsonl")[:30]
    methods = ("widen", "widen_concepts")
    tonight = evaluate(two.lexicon, DecisionSet(), index, queries, two.options, methods=methods)
    assert tonight["methods"]["widen_concepts"]["recall@100"] >= tonight["methods"]["widen"]["recall@100"] - 0.02
    other = open_store(store, refused.version)
    assert (
        "widen_concepts"
        not in evaluate(other.lexicon, DecisionSet(), index, queries, other.options, methods=methods)["methods"]
    )


def test_review_page_shows_concepts_and_blocks_one(trained_store: Path, tmp_path: Path) -> None:
    store = tmp_path / "store"
    shutil.copytree(trained_store, store)
    settings = Settings(store=str(store), review_token=SecretStr("letmein"))
    with TestClient(create_app(settings)) as client:
        page = client.get("/review", params={"q": "kitchen porter"})
        assert page.status_code == 200 and "Concepts: what the postings say" in page.text
        assert "not sent" in page.text  # the option is off for this bundle
        token = client.get("/v1/expand", params={"q": "kitchen porter", "concepts": "true"}).json()["concepts"][0]
        assert token["token"] in page.text and token["label"][0] in page.text
        made = client.post(
            "/v1/decisions",
            json={"phrase": "kitchen porter", "action": "block", "neighbour": token["token"], "reviewer": "ana"},
            headers={"Authorization": "Bearer letmein"},
        )
        assert made.status_code in (200, 201), made.text
        after = client.get("/v1/expand", params={"q": "kitchen porter", "concepts": "true"}).json()["concepts"]
        assert token["token"] not in {c["token"] for c in after}
