"""The demo search page: the board's front end over the tantivy index, marking expansion-only hits."""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

from fastapi.testclient import TestClient

from service.app import create_app
from service.settings import Settings


def _plain(expansion: dict[str, Any]) -> str:
    """As the page's script builds it: every segment as typed but noise words, all required."""
    return " AND ".join(
        '"' + s["text"].replace('"', "").replace("\\", "") + '"^1'
        for s in expansion["segments"]
        if s["kind"] != "noise"
    )


def _follow_page(client: TestClient, q: str) -> tuple[dict[str, Any], list[dict[str, Any]], list[dict[str, Any]]]:
    """What the page does for one query: expand with places in their field, search full_query and the plain words."""
    expansion = client.get("/v1/expand", params={"q": q, "places": "field"}).json()
    plain = _plain(expansion)
    asked = {
        "query_text": expansion["full_query"],
        "plain_text": plain,
        "expansion_text": expansion["query_text"],
        "limit": 100,
    }
    expanded = client.post("/demo/search", json=asked).json()["hits"]
    plain_hits = client.post("/demo/search", json={"query_text": plain, "plain_text": plain, "limit": 100}).json()
    return expansion, expanded, plain_hits["hits"]


def test_demo_page_searches_plain_and_expanded(trained_store: Path, demo_dir: Path, tmp_path: Path) -> None:
    store = tmp_path / "store"
    shutil.copytree(trained_store, store)
    settings = Settings(store=store, access_log=False, demo_index=demo_dir / "open_postings.jsonl")
    with TestClient(create_app(settings)) as client:
        page = client.get("/demo")
        assert page.status_code == 200 and "/v1/expand?" in page.text and 'id="search"' in page.text
        assert "full_query" in page.text and '"field"' in page.text  # what _follow_page repeats

        expansion, expanded, plain_hits = _follow_page(client, "lorry driver")
        assert plain_hits and not any(h["via_expansion"] for h in plain_hits)
        assert all("lorry driver" in h["title"].lower() for h in plain_hits)
        marked = [h for h in expanded if h["via_expansion"]]
        assert marked, "expansion should bring in postings that never say lorry driver"
        assert all("lorry driver" not in h["title"].lower() for h in marked)
        # full_query puts the seeker's exact matches first, then what only an expansion found, then
        # what only shares a word with the query.
        tiers = [2 if h["shares_a_word_only"] else 1 if h["via_expansion"] else 0 for h in expanded]
        assert tiers == sorted(tiers) and tiers[0] == 0

        # A seeker-typed query: the town goes to the location field, the noise words nowhere.
        q = "lorry driver jobs near hensby"
        expansion, expanded, plain_hits = _follow_page(client, q)
        assert 'location:"Hensby"' in expansion["full_query"]
        assert [s["kind"] for s in expansion["segments"]] == ["phrase", "noise", "noise", "place"]
        widened = client.post("/demo/search", json={"query_text": expansion["query_text"], "limit": 100}).json()
        assert widened["hits"] and all(h["location"] == "Hensby" for h in widened["hits"])  # the field, not text
        # full_query ranks what the seeker's words or widen's query match above the postings that
        # only share a word with the query (its last, optional part).
        matched = {h["id"] for h in widened["hits"]} | {h["id"] for h in plain_hits}
        assert expanded[0]["id"] in matched
        ranks = [h["id"] in matched for h in expanded]
        assert ranks == sorted(ranks, reverse=True)
        # The page tells those apart: "via expansion" only for what widen's query matched, and
        # "shares a word" for the rest that the seeker's words do not match.
        widened_ids = {h["id"] for h in widened["hits"]}
        assert all(h["id"] in widened_ids for h in expanded if h["via_expansion"])
        loose = [h for h in expanded if h["shares_a_word_only"]]
        assert loose and all(h["id"] not in matched and not h["via_expansion"] for h in loose)

        bad = client.post("/demo/search", json={"query_text": '"unbalanced', "plain_text": ""})
        assert bad.status_code == 400 and bad.json()["error"]["field"] == "query_text"
    with TestClient(create_app(Settings(store=store, access_log=False))) as client:
        assert client.get("/demo").status_code == 404  # only with a demo index
