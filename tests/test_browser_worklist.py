"""The worklist view in a real browser (Debian's Chromium through Playwright, as tests/test_browser.py):
hostile queries and names shown as text, the filters and the mark-looked form, the phrase link."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any
from urllib.parse import urlencode

import httpx

from tests.helpers import HOSTILE
from tests.live_server import live_server
from tests.test_browser import ARTIFACTS, TOKEN, _dismiss, _sign_in, browser, review_store

__all__ = ["browser", "review_store"]  # fixtures, shared with tests/test_browser.py


def test_worklist_in_the_browser_shows_hostile_queries_as_text_and_marks_one(
    browser: Any, review_store: Path, demo_dir: Path, tmp_path: Path
) -> None:
    """The worklist view over a day's log holding hostile queries: nothing runs, the filters and the
    mark-looked form work by keyboard and mouse, and the phrase link opens the comparison."""
    log = tmp_path / "log.jsonl"
    lines = (demo_dir / "query_log.jsonl").read_text(encoding="utf-8").splitlines()[:2000]
    lines += [json.dumps({"q": h[:300]}) for h in HOSTILE for _ in range(50)]
    log.write_text("\n".join(lines) + "\n", encoding="utf-8")
    context = browser.new_context()
    page = context.new_page()
    dialogs: list[str] = []
    page.on("dialog", lambda d: _dismiss(d, dialogs))
    env = {"WIDEN_REVIEW_TOKEN": TOKEN, "WIDEN_QUERY_LOG": str(log)}
    with live_server(review_store, env) as server:
        _sign_in(page, server.base)
        page.get_by_role("link", name="Worklist", exact=True).click()
        assert page.get_by_role("heading", level=1).inner_text().startswith("Worklist")
        assert page.locator("script, img, iframe, object, embed").count() == 0
        page.get_by_label("Reason", exact=True).select_option("finds_little")
        page.get_by_role("button", name="Show").click()
        shown = page.locator("table.worklist").inner_text()
        assert "javascript" in shown and "document.cookie" in shown  # the tokeniser left the words, as text
        row = page.locator("table.worklist tbody tr").first
        phrase = row.locator("td").first.inner_text()
        row.get_by_label("Reviewer").fill(HOSTILE[1])  # a reviewer's name is shown back on the page
        row.get_by_role("button", name="Looked at").click()
        page.wait_for_url("**/review/worklist?**")
        assert "Marked 1 item" in page.get_by_role("status").first.inner_text()
        page.goto(f"{server.base}/review/worklist?looked=yes")
        assert HOSTILE[1] in page.locator("table.worklist").inner_text()
        ARTIFACTS.mkdir(parents=True, exist_ok=True)
        page.screenshot(path=str(ARTIFACTS / "worklist.png"), full_page=True)
        for hostile in HOSTILE:  # what the page echoes from its address
            page.goto(f"{server.base}/review/worklist?{urlencode({'done': hostile, 'reason': hostile})}")
            assert page.locator("script, img, iframe, object, embed").count() == 0
            assert page.get_by_role("heading", level=1).inner_text().startswith("Worklist")
        looked = httpx.get(f"{server.base}/v1/worklist", params={"looked": "yes"}).json()["items"]
        assert [i["phrase"] for i in looked] == [phrase.strip()]
        page.goto(f"{server.base}/review/worklist?reason=changed")
        page.locator("table.worklist tbody tr td a").first.click()
        assert "compare=" in page.url
    assert dialogs == []
    context.close()
