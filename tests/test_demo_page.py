"""The demo search page: the board's front end over the tantivy index, marking expansion-only hits."""

from __future__ import annotations

from pathlib import Path

from fastapi.testclient import TestClient

from service.app import create_app
from service.settings import Settings


def test_demo_page_searches_plain_and_expanded(trained_store: Path, demo_dir: Path, tmp_path: Path) -> None:
    import shutil

    store = tmp_path / "store"
    shutil.copytree(trained_store, store)
    settings = Settings(store=store, access_log=False, demo_index=demo_dir / "open_postings.jsonl")
    with TestClient(create_app(settings)) as client:
        page = client.get("/demo")
        assert page.status_code == 200 and "/v1/expand?" in page.text and 'id="search"' in page.text
        # As the page's script does: expand over HTTP, then search with the query text.
        expansion = client.get("/v1/expand", params={"q": "lorry driver"}).json()
        plain = " AND ".join(f'"{c["phrase"]}"^1' for c in expansion["clauses"] if c["original"])
        asked = {"query_text": expansion["query_text"], "plain_text": plain, "limit": 100}
        expanded = client.post("/demo/search", json=asked).json()
        plain_hits = client.post("/demo/search", json={"query_text": plain, "plain_text": plain}).json()
        assert plain_hits["hits"] and not any(h["via_expansion"] for h in plain_hits["hits"])
        assert all("lorry driver" in h["title"].lower() for h in plain_hits["hits"])
        assert expanded["hits"]
        marked = [h for h in expanded["hits"] if h["via_expansion"]]
        assert marked, "expansion should bring in postings that never say lorry driver"
        assert all("lorry driver" not in h["title"].lower() for h in marked)
        bad = client.post("/demo/search", json={"query_text": '"unbalanced', "plain_text": ""})
        assert bad.status_code == 400 and bad.json()["error"]["field"] == "query_text"
    with TestClient(create_app(Settings(store=store, access_log=False))) as client:
        assert client.get("/demo").status_code == 404  # only with a demo index
