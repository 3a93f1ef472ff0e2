"""The review page and the demo search page in a real browser: Debian's Chromium, driven by
Playwright for Python through `executable_path` (no browser is downloaded).

Locally these skip, saying why, when no Chromium is found; under CI (CI=true) they fail
instead, since `.ci/run` installs it. Screenshots go to build/artifacts/ (or
WIDEN_TEST_ARTIFACTS).
"""

from __future__ import annotations

import os
import shutil
from collections.abc import Iterator
from pathlib import Path
from typing import Any
from urllib.parse import urlencode

import httpx
import pytest

from tests.helpers import HOSTILE, IN_CI
from tests.live_server import live_server
from widen.model.store import Store

TOKEN = "tollbridge-review-browser"
ARTIFACTS = Path(os.environ.get("WIDEN_TEST_ARTIFACTS", "build/artifacts"))
INTERACTIVE_ROLES = {"button", "link", "textbox", "searchbox", "combobox", "radio", "checkbox", "spinbutton"}


def _chromium() -> str | None:
    for candidate in (os.environ.get("WIDEN_CHROMIUM", ""), "/usr/bin/chromium", "/usr/bin/chromium-browser"):
        if candidate and Path(candidate).is_file():
            return candidate
    return shutil.which("chromium")


def _chromium_or_stop(path: str | None, in_ci: bool) -> str:
    """The browser to drive; without one, skip locally (saying why) and fail under CI."""
    if path is None:
        message = "no Chromium found: apt-get install chromium (or set WIDEN_CHROMIUM) to run the browser tests"
        if in_ci:
            pytest.fail(message)
        pytest.skip(message)
    return path


def test_without_chromium_ci_fails_and_a_laptop_skips() -> None:
    with pytest.raises(pytest.fail.Exception, match="no Chromium found"):
        _chromium_or_stop(None, in_ci=True)
    with pytest.raises(pytest.skip.Exception, match="apt-get install chromium"):
        _chromium_or_stop(None, in_ci=False)
    assert _chromium_or_stop("/usr/bin/chromium", in_ci=True) == "/usr/bin/chromium"


@pytest.fixture(scope="module")
def browser() -> Iterator[Any]:
    path = _chromium_or_stop(_chromium(), IN_CI)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        launched = p.chromium.launch(executable_path=path)
        yield launched
        launched.close()


@pytest.fixture
def review_store(two_bundle_store: Path, tmp_path: Path) -> Path:
    store = tmp_path / "store"
    shutil.copytree(two_bundle_store, store)
    return store


def _served(store: Path, demo_dir: Path, workers: int = 1) -> Any:
    env = {"WIDEN_REVIEW_TOKEN": TOKEN}
    args = ("--demo-index", str(demo_dir / "open_postings.jsonl"), "--workers", str(workers))
    return live_server(store, env, args)


def _sign_in(page: Any, base: str) -> None:
    page.goto(f"{base}/review")
    page.get_by_role("link", name="Give the review token to change decisions").click()
    page.get_by_label("Review token").fill(TOKEN)
    page.get_by_role("button", name="Start reviewing").click()
    page.wait_for_url(f"{base}/review")


def _dismiss(dialog: Any, seen: list[str]) -> None:
    """A script dialog must never open; note it and close it so the test can fail on it."""
    seen.append(dialog.message)
    dialog.dismiss()


def _neighbours(base: str, query: str) -> list[str]:
    result = httpx.get(f"{base}/v1/expand", params={"q": query}).json()
    return [e["phrase"] for s in result["segments"] for e in s["expansions"]]


def test_review_block_restart_and_compare(browser: Any, review_store: Path, demo_dir: Path) -> None:
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    context = browser.new_context(viewport={"width": 1280, "height": 900})
    page = context.new_page()
    dialogs: list[str] = []
    page.on("dialog", lambda d: _dismiss(d, dialogs))
    with _served(review_store, demo_dir) as server:
        _sign_in(page, server.base)
        page.get_by_label("Phrase or query").fill("lorry driver")
        page.get_by_label("Phrase or query").press("Enter")
        page.wait_for_selector("table.candidates")
        kept = page.locator("table.candidates tr.kept")
        assert kept.count() >= 1
        assert page.locator("figure.map svg circle").count() >= 2
        victim = kept.first.locator("bdi").inner_text().strip()
        assert victim in _neighbours(server.base, "lorry driver")
        page.get_by_label(victim, exact=True).check()
        page.get_by_label("Block the chosen neighbour").check()
        page.locator("#who-0").fill("Dana, search team")
        page.locator("#note-0").fill("checked in the browser test")
        page.get_by_role("button", name="Record decision for lorry driver").click()
        assert "recorded: block" in page.get_by_role("status").first.inner_text()
        assert victim not in _neighbours(server.base, "lorry driver")
        row = page.locator("table.candidates tr", has=page.get_by_text(victim, exact=True)).first
        assert "blocked by a reviewer" in row.inner_text()
    # A restart: the decision is still in force, and the page still shows it.
    with _served(review_store, demo_dir) as server:
        assert victim not in _neighbours(server.base, "lorry driver")
        page.goto(f"{server.base}/review?" + urlencode({"q": "lorry driver"}))
        assert page.get_by_role("button", name="Withdraw decision 1").is_visible()
        # Compare with the other bundle of the store.
        other = next(v for v in Store(review_store).versions() if v != Store(review_store).current_version())
        page.get_by_label("Side by side with bundle").select_option(other)
        page.get_by_role("button", name="Show").click()
        heading = page.get_by_role("heading", name="Side by side: serving model and")
        assert heading.is_visible() and other in heading.inner_text()
        assert page.locator("table.compare tbody tr").count() >= 1
        assert page.get_by_role("heading", name="Postings preview").is_visible()
        shot = ARTIFACTS / "review-page.png"
        page.screenshot(path=str(shot), full_page=True)
        assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert dialogs == []
    context.close()


_FOCUSABLES = """() => {
  const all = [...document.querySelectorAll('a[href], button, input:not([type=hidden]), select, textarea, summary')]
    .filter(el => !el.disabled && el.getClientRects().length > 0);
  const key = el => el.type === 'radio'
    ? 'radio:' + (el.form ? el.form.id : '') + ':' + el.name
    : el.tagName + ':' + (el.id || el.name || '') + ':' + (el.getAttribute('href') || '')
      + '|' + (el.value || el.textContent.trim());
  return [...new Set(all.map(key))];
}"""

_ACTIVE = """() => {
  const el = document.activeElement;
  if (!el || el === document.body) return '';
  return el.type === 'radio'
    ? 'radio:' + (el.form ? el.form.id : '') + ':' + el.name
    : el.tagName + ':' + (el.id || el.name || '') + ':' + (el.getAttribute('href') || '')
      + '|' + (el.value || el.textContent.trim());
}"""


def _unnamed_controls(page: Any) -> list[str]:
    """Interactive nodes of Chromium's own accessibility tree that have no accessible name."""
    cdp = page.context.new_cdp_session(page)
    tree = cdp.send("Accessibility.getFullAXTree")
    bad = []
    for node in tree["nodes"]:
        role = node.get("role", {}).get("value")
        if node.get("ignored") or role not in INTERACTIVE_ROLES:
            continue
        if not str(node.get("name", {}).get("value", "")).strip():
            bad.append(f"{role} {node.get('backendDOMNodeId')}")
    return bad


@pytest.mark.parametrize("path", ["/review?q=section+chef+copperwick", "/review/decisions?state=all", "/review/access"])
def test_every_control_is_named_and_reachable_by_keyboard(
    browser: Any, review_store: Path, demo_dir: Path, path: str
) -> None:
    context = browser.new_context(viewport={"width": 1280, "height": 900})
    page = context.new_page()
    with _served(review_store, demo_dir) as server:
        _sign_in(page, server.base)
        page.goto(server.base + path)
        # Names as the browser computes them for assistive technology (Chromium's AX tree).
        assert _unnamed_controls(page) == []
        expected = page.evaluate(_FOCUSABLES)
        assert len(expected) >= 3
        reached = []
        page.locator("body").focus()
        for _ in range(len(expected) + 10):
            page.keyboard.press("Tab")
            reached.append(page.evaluate(_ACTIVE))
        missing = [k for k in expected if k not in reached]
        assert missing == [], missing
    context.close()


def test_hostile_strings_do_not_run_or_break_the_page(browser: Any, review_store: Path, demo_dir: Path) -> None:
    context = browser.new_context()
    page = context.new_page()
    dialogs: list[str] = []
    page.on("dialog", lambda d: _dismiss(d, dialogs))
    with _served(review_store, demo_dir) as server:
        _sign_in(page, server.base)
        auth = {"Authorization": f"Bearer {TOKEN}"}
        for n, hostile in enumerate(HOSTILE):
            body = {"phrase": "staff nurse", "neighbour": f"pin {n}", "action": "pin", "weight": 0.1}
            made = httpx.post(
                f"{server.base}/v1/decisions",
                json={**body, "reviewer": hostile[:100], "note": hostile[:1000]},
                headers=auth,
            )
            assert made.status_code == 201, made.text
        for hostile in HOSTILE:
            for url in (f"/review?{urlencode({'q': hostile})}", "/review/decisions?state=all", "/review?q=staff+nurse"):
                page.goto(server.base + url)
                assert page.locator("script, img, iframe, object, embed").count() == 0
                assert page.get_by_role("heading", level=1).inner_text() in ("Phrase review", "Decisions")
                assert page.get_by_role("link", name="Decisions", exact=True).is_visible()
            page.goto(f"{server.base}/review?{urlencode({'q': hostile})}")
            assert page.get_by_label("Phrase or query").input_value() == hostile.replace("\r", "")
    assert dialogs == []
    context.close()


def _search_on_page(page: Any, query: str, mode: str) -> list[tuple[str, str]]:
    """Search as a seeker would and wait for the page's final status (not its "searching..." line);
    the results as (title, mark): "" for the seeker's own words, "widened" for a posting only an
    expansion found, "loose" for one that only shares a word with the query."""
    page.get_by_label("Job title or skill").fill(query)
    page.get_by_label(mode).check()
    page.get_by_role("button", name="Search").click()
    page.wait_for_function("/postings \\(model /.test(document.getElementById('status').textContent)")
    items = page.locator("#results li")
    return [
        (items.nth(i).locator("strong").inner_text(), (items.nth(i).get_attribute("class") or "").strip())
        for i in range(items.count())
    ]


def test_demo_search_page_marks_postings_only_an_expansion_found(
    browser: Any, review_store: Path, demo_dir: Path
) -> None:
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    page = browser.new_page(viewport={"width": 1100, "height": 900})
    with _served(review_store, demo_dir) as server:
        page.goto(f"{server.base}/demo")
        # A query whose own words find some open postings, fewer than a page of results.
        plain = _search_on_page(page, "lorry driver hensby", "plain words only")
        assert 0 < len(plain) < 20, plain
        assert not any(marked for _, marked in plain)
        expanded = _search_on_page(page, "lorry driver hensby", "with widen")
        assert len(expanded) > len(plain)
        # The seeker's own matches come first, then the postings only a neighbour phrase found, then
        # those that only share a word with the query, each marked.
        assert sorted(t for t, _ in expanded[: len(plain)]) == sorted(t for t, _ in plain)
        marks = [m for _, m in expanded]
        assert marks[: len(plain)] == [""] * len(plain) and "widened" in marks
        order = {"": 0, "widened": 1, "loose": 2}
        assert [order[m] for m in marks] == sorted(order[m] for m in marks)
        assert page.locator("#results li.widened .badge").first.inner_text() == "via expansion"
        page.screenshot(path=str(ARTIFACTS / "demo-search.png"), full_page=True)
    page.close()
