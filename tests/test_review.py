"""The review page (/review) and the decisions API behind it, through the app in-process."""

from __future__ import annotations

import re
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pytest
from fastapi.testclient import TestClient

from service.review.views import CandidateRow, compare_view, neighbour_map, phrase_view
from tests.helpers import open_store
from tests.review_pages import review_client, tags_of
from widen.decisions.decision import DecisionSet
from widen.expansion.options import ExpansionOptions
from widen.expansion.result import Clause, ExpansionResult, ModelInfo
from widen.model.store import Store


@pytest.fixture
def client(store_copy: Path) -> Iterator[TestClient]:
    with review_client(store_copy) as c:
        yield c


# -- what the page shows ---------------------------------------------------------------------


def test_page_shows_segments_candidates_reasons_and_query_text(client: TestClient, trained_store: Path) -> None:
    got = client.get("/review", params={"q": "lorry driver hensby"})
    assert got.status_code == 200
    html = got.text
    opened = open_store(trained_store)
    lexicon = opened.lexicon
    result, views = phrase_view(lexicon, opened.cache, DecisionSet(), "lorry driver hensby", ExpansionOptions())
    assert [v.text for v in views] == ["lorry driver", "hensby"]
    assert lexicon.version in html and lexicon.created_at in html
    assert result.query_text.replace('"', "&#34;") in html  # the final query_text, escaped
    kept = [c for c in views[0].candidates if c.kept]
    dropped = [c for c in views[0].candidates if not c.kept]
    assert kept and dropped and all(c.reason for c in dropped)
    # Every kept neighbour is on the page with its weight; each shown drop with its reason.
    for c in kept:
        assert f"<bdi>{c.phrase}</bdi>" in html and f"{c.weight:.4f}" in html
    assert "similarity under the floor" in html and "a place or employer name is never expanded" in html
    # Bars: one per candidate, as long as the similarity (times 100 px).
    fills = [float(a["width"] or 0) for t, a in tags_of(html) if t == "rect" and a.get("class") == "fill"]
    assert fills[: len(views[0].candidates)] == [round(c.bar * 100, 1) for c in views[0].candidates]
    # The map: the segment and up to 15 closest candidates, inside the 480 x 300 box.
    circles = [a for t, a in tags_of(html) if t == "circle"]
    assert 2 <= len(circles) <= 15
    assert all(0 <= float(a["cx"] or -1) <= 480 and 0 <= float(a["cy"] or -1) <= 300 for a in circles)
    # Scripts are refused outright on these pages, and the page has none.
    assert "default-src 'none'" in got.headers["content-security-policy"]
    assert not any(t == "script" for t, _ in tags_of(html))


def test_map_is_the_first_two_principal_components(trained_store: Path) -> None:
    opened = open_store(trained_store)
    lexicon = opened.lexicon
    _, views = phrase_view(lexicon, opened.cache, DecisionSet(), "staff nurse", ExpansionOptions())
    rows = views[0].candidates[:12]
    points = neighbour_map(lexicon, "staff nurse", rows)
    assert points[0].role == "phrase" and len(points) == 13
    # Reference: PCA as the eigenvectors of the covariance matrix with the largest eigenvalues
    # (the textbook definition, e.g. Jolliffe, Principal Component Analysis; cited from memory),
    # computed with numpy's eigh instead of our SVD. Each axis is equal up to sign and scale.
    names = [p.phrase for p in points]
    vectors = np.vstack([lexicon.normed[lexicon.index[n.replace(" ", "_")]] for n in names]).astype(np.float64)
    centred = vectors - vectors.mean(axis=0)
    values, vecs = np.linalg.eigh(np.cov(centred, rowvar=False))
    top = vecs[:, np.argsort(values)[::-1][:2]]
    reference = centred @ top
    ours = np.array([[p.x, p.y] for p in points])
    for axis in range(2):
        r = np.corrcoef(ours[:, axis], reference[:, axis])[0, 1]
        assert abs(r) > 0.9999, (axis, r)
    # One scale for both axes, so distances on the map compare across directions.
    scales = [np.std(ours[:, a]) / np.std(reference[:, a]) for a in range(2)]
    assert scales[0] == pytest.approx(scales[1], rel=1e-3)


def test_compare_marks_added_removed_and_moves() -> None:
    def result(*phrases: tuple[str, float]) -> ExpansionResult:
        clauses = [Clause(phrase="lorry driver", weight=1.0, original=True, segment=0)]
        clauses += [Clause(phrase=p, weight=w, original=False, segment=0) for p, w in phrases]
        return ExpansionResult(
            query="lorry driver",
            model=ModelInfo(version="v", created_at=""),
            segments=[],
            clauses=clauses,
            query_text="",
        )

    left = result(("hgv driver", 0.45), ("class 1 driver", 0.40), ("truck driver", 0.30))
    right = result(("truck driver", 0.46), ("hgv driver", 0.44), ("c+e driver", 0.2))
    marks = {c.phrase: c.mark for c in compare_view(left, right)}
    assert marks == {"truck driver": "up", "hgv driver": "down", "class 1 driver": "removed", "c+e driver": "added"}
    assert all(c.mark == "same" for c in compare_view(left, left))


def test_page_compares_two_bundles_of_the_store(two_bundle_store: Path) -> None:
    versions = Store(two_bundle_store).versions()
    assert len(versions) == 2
    current = Store(two_bundle_store).current_version()
    other = next(v for v in versions if v != current)
    with review_client(two_bundle_store, token=None) as c:
        html = c.get("/review", params={"q": "warehouse operative", "compare": other}).text
        assert "Side by side: serving model and" in html and f"<bdi>{other}</bdi>" in html
        marks = re.findall(r'<span class="tag mark-(\w+)">', html)
        assert marks and set(marks) <= {"added", "removed", "up", "down", "same"}
        assert c.get("/review", params={"q": "warehouse operative", "compare": "no-such"}).status_code == 200


def test_preview_marks_postings_only_an_expansion_found(store_copy: Path, demo_dir: Path) -> None:
    with review_client(store_copy, token=None) as c:
        plain = c.get("/review", params={"q": "section chef copperwick"}).text
        assert "No evaluation index in this store yet" in plain
    with review_client(store_copy, token=None, demo_index=demo_dir / "open_postings.jsonl") as c:
        html = c.get("/review", params={"q": "section chef copperwick"}).text
        assert "Postings preview" in html
        assert html.count("found only by expansion") >= 1
        section = html[html.index('id="preview"') :]
        assert section.count("<li") <= 20


# -- access ------------------------------------------------------------------------------------


# -- reviewer actions ----------------------------------------------------------------------------


# -- hostile input --------------------------------------------------------------------------------


def test_candidate_bar_is_clamped() -> None:
    assert CandidateRow("x", -0.3, False, None, None, "model", "below_min_similarity").bar == 0.0
    assert CandidateRow("x", 0.75, True, 0.2, "related", "model", None).bar == 0.75


def test_the_old_address_of_the_page_redirects_to_it(client: TestClient) -> None:
    """The page was at /debug before it was named for what it is: bookmarks still reach it, query kept."""
    got = client.get("/debug", params={"q": "lorry driver"}, follow_redirects=False)
    assert got.status_code == 308 and got.headers["location"] == "/review?q=lorry+driver"
    deeper = client.get("/debug/decisions", params={"phrase": "rn"}, follow_redirects=False)
    assert deeper.status_code == 308 and deeper.headers["location"] == "/review/decisions?phrase=rn"
    assert "lorry driver" in client.get("/debug", params={"q": "lorry driver"}).text  # followed: the page itself
