"""The reviewer's worklist after a retrain: the query log, the coded-wording check, the list against a
reference built by hand, the command, the API, the page and the decisions in bulk."""

from __future__ import annotations

import gzip
import json
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest

from demo_postings import oxmere, tollbridge
from tests.helpers import Opened, open_store
from tests.review_pages import REVIEWER, review_client, sign_in
from widen.cli import main
from widen.decisions.sqlite import SqliteDecisionStore
from widen.expansion.query_text import JOBS
from widen.expansion.result import Expansion
from widen.model.store import Store
from widen.text.forms import phrase_of_text
from widen.worklist.build import Bundle, Limits, build_worklist
from widen.worklist.coded import CodedCheck
from widen.worklist.items import Worklist
from widen.worklist.querylog import QueryLog, read_query_log


def test_the_query_log_reads_searches_and_counts_plain_or_gzip(tmp_path: Path) -> None:
    plain = tmp_path / "log.jsonl"
    rows = [{"at": "2026-11-30T01:00:00Z", "q": "Care  assistant"}, {"at": "2026-12-01T09:00:00Z", "q": "chef"}]
    plain.write_text("\n".join([*map(json.dumps, rows), "{not json", '{"q": ""}', json.dumps(rows[1])]) + "\n")
    log = read_query_log(plain)
    assert log.searches == {"Care assistant": 1.0, "chef": 2.0} and log.days == 2.0 and log.skipped == 2
    counts = tmp_path / "counts.jsonl.gz"
    with gzip.open(counts, "wt", encoding="utf-8") as fh:
        fh.write(
            '{"days": 7}\n{"q": "chef", "searches": 70}\n{"q": "rn", "searches": 14}\n{"q": "x", "searches": -1}\n'
        )
    log = read_query_log(counts)
    assert log.per_day("chef") == 10.0 and log.total_per_day == 12.0 and log.skipped == 1
    assert read_query_log(counts, days=14).per_day("rn") == 1.0


def test_the_coded_check_finds_every_coded_title_of_the_boards() -> None:
    """Every gender-coded title the invented boards' truth marks (`coded_titles`) is found, and few of their
    neutral titles are; the published list of gender-coded advert words (Gaucher, Friesen & Kay 2011,
    written from memory of its appendix) marks its own examples and, kept apart, none of those titles."""
    check = CodedCheck()
    families = [*tollbridge.FAMILIES, *oxmere.FAMILIES]
    coded = {t for f in families for t in f.coded}
    assert coded >= {"ward sister", "waitress", "barmaid", "handyman"}
    assert all(check.reasons(t) for t in coded), [t for t in coded if not check.reasons(t)]
    neutral = {t for f in families for t in [*f.equivalent, *f.related]} - coded
    flagged = [t for t in neutral if check.reasons(t)]
    assert len(flagged) <= 0.02 * len(neutral), flagged
    assert "masculine" in check.wording("competitive")[0] and "feminine" in check.wording("supportive")[0]
    assert all(check.wording(t) == [] for t in coded)  # nouns that name the holder's sex: not advert wording
    assert CodedCheck(["night porter"]).reasons("senior night porter")  # the board's own list, whole words
    assert not CodedCheck(["porter"]).reasons("reporter")


@dataclass(frozen=True)
class Listed:
    now: Opened
    before: Opened
    worklist: Worklist
    log: QueryLog


@pytest.fixture(scope="module")
def listed(two_bundle_store: Path, demo_dir: Path) -> Listed:
    """The list of the demo store's second bundle (another skip-gram seed) against its first."""
    now = open_store(two_bundle_store)
    before = open_store(two_bundle_store, Store(two_bundle_store).rollback_target())
    log = read_query_log(demo_dir / "query_log.jsonl")
    bundles = Bundle(now.lexicon, now.cache), Bundle(before.lexicon, before.cache)
    return Listed(now, before, build_worklist(*bundles, [], log, now.options), log)


def _alone(opened: Opened, phrase: str) -> dict[str, Expansion]:
    result = opened.reference().expand(phrase)
    return {e.phrase: e for s in result.segments if s.kind in JOBS for e in s.expansions}


def test_the_worklist_lists_every_phrase_whose_expansions_changed(listed: Listed) -> None:
    """Against a reference built by hand: every job phrase of the day's log expanded alone under both
    bundles with nothing kept between calls; each whose expansions differ (a neighbour in or out, a
    relation changed, a weight moved by more than the margin) is on the list as changed."""
    phrases: set[str] = set()
    for query in listed.log.searches:
        result = listed.now.reference().expand(query)
        phrases |= {phrase_of_text(s.text) for s in result.segments if s.kind in JOBS}
    margin, differ = Limits().weight_moved, set()
    for p in phrases:
        a, b = _alone(listed.now, p), _alone(listed.before, p)
        moved = any(a[n].relation != b[n].relation or abs(a[n].weight - b[n].weight) > margin for n in set(a) & set(b))
        if set(a) != set(b) or moved:
            differ.add(p)
    items = listed.worklist.items
    changed = {i.phrase for i in items if "changed" in i.reasons}
    assert differ and differ == changed, (sorted(differ - changed)[:10], sorted(changed - differ)[:10])
    # A reviewer who works through the top 50 has seen every change carrying at least 1% of searches.
    top = {i.phrase for i in items[:50]}
    heavy = {i.phrase for i in items if "changed" in i.reasons and i.searches >= 0.01 * listed.log.total_per_day}
    assert heavy <= top and 0.0 < listed.worklist.coverage(items[:50]) <= 1.0
    assert [i.searches for i in items] == sorted((i.searches for i in items), reverse=True)
    # Coded: "charge nurse" brings in "ward sister" in the demo board (a coded title, docs/scenario.md).
    nurse = next((i for i in items if i.phrase == "charge nurse"), None)
    assert nurse is not None and "coded" in nurse.reasons and any("ward sister" in n for n in nurse.notes)


def test_the_command_prints_the_list_and_blocks_in_one_batch(two_bundle_store: Path, demo_dir: Path, tmp_path: Path,
                                                            capsys: pytest.CaptureFixture[str]) -> None:  # fmt: skip
    store = tmp_path / "store"
    shutil.copytree(two_bundle_store, store)
    log = ["--store", str(store), "--log", str(demo_dir / "query_log.jsonl")]
    assert main(["worklist", *log, "--json", "--reason", "coded"]) == 0
    got = json.loads(capsys.readouterr().out)
    assert got["items"] and all("coded" in i["reasons"] for i in got["items"])
    assert main(["worklist", *log, "--summary"]) == 0
    assert "phrases changed" in capsys.readouterr().out
    assert main(["worklist", *log, "--block-everywhere", "ward sister", "--reviewer", REVIEWER]) == 0
    batch = capsys.readouterr().out.split()[1].rstrip(":")
    decisions = SqliteDecisionStore(store / "decisions.sqlite")
    blocked = [d for d in decisions.entries() if d.action == "block"]
    assert blocked and all(d.neighbour == "ward sister" and d.note and batch in d.note for d in blocked)
    assert "charge nurse" in {d.phrase for d in blocked}
    made = [a for a in decisions.audit() if a["event"] == "made"]
    assert len(made) == len(blocked)  # each phrase it touched is in the audit trail
    assert main(["worklist", "--store", str(store), "--withdraw-batch", batch, "--reviewer", REVIEWER]) == 0
    assert not [d for d in decisions.entries() if d.action == "block"]
    assert main(["worklist", "--store", str(store), "--withdraw-batch", batch, "--reviewer", REVIEWER]) == 2


def test_the_page_and_the_api_mark_items_looked_at(two_bundle_store: Path, demo_dir: Path, tmp_path: Path) -> None:
    store = tmp_path / "store"
    shutil.copytree(two_bundle_store, store)
    with review_client(store, query_log=demo_dir / "query_log.jsonl") as c:
        first = c.get("/v1/worklist", params={"per_page": 5}).json()
        assert len(first["items"]) == 5 and first["total"] > 5 and first["looked_share"] == 0.0
        page = c.get("/review/worklist")
        assert page.status_code == 200 and "Worklist: what to look at" in page.text
        phrase = first["items"][0]["phrase"]
        # Without the token and its CSRF key nothing is marked.
        forms = {
            "/review/worklist/looked": {"phrase": phrase},
            "/review/worklist/block": {"neighbour": "ward sister"},
            "/review/worklist/withdraw-batch": {"batch": "1a2b3c4d"},
        }
        for path, data in forms.items():
            assert c.post(path, data={**data, "reviewer": "x"}).status_code == 401
        csrf = sign_in(c)
        for path, data in forms.items():  # signed in, but a form from elsewhere carries no CSRF key
            assert c.post(path, data={**data, "reviewer": "x", "csrf": "0" * 64}).status_code == 403
        done = c.post("/review/worklist/looked", data={"csrf": csrf, "phrase": phrase, "reviewer": REVIEWER})
        assert done.status_code == 200 and "Marked 1 item" in done.text
        after = c.get("/v1/worklist", params={"looked": "yes"}).json()
        assert [i["phrase"] for i in after["items"]] == [phrase] and after["items"][0]["looked_by"] == REVIEWER
        assert 0.0 < after["looked_share"] < 1.0
        group = c.post("/review/worklist/looked", data={"csrf": csrf, "group": "unsure", "reviewer": REVIEWER})
        assert group.status_code == 200
        assert c.get("/v1/worklist", params={"reason": "unsure", "looked": "no"}).json()["total"] == 0
        blocked = c.post(
            "/review/worklist/block", data={"csrf": csrf, "neighbour": "ward sister", "reviewer": REVIEWER}
        )
        assert blocked.status_code == 200 and "Batch " in blocked.text
        nurse = c.get("/v1/expand", params={"q": "charge nurse"}).json()
        assert "ward sister" not in {e["phrase"] for s in nurse["segments"] for e in s["expansions"]}
        assert c.get("/v1/worklist", params={"reason": "nonsense"}).status_code == 400
    with review_client(store) as c:
        assert c.get("/v1/worklist").json()["error"]["code"] == "no_query_log"
    own = tmp_path / "coded.txt"
    own.write_text("# the board's own coded titles\nward manager\n", encoding="utf-8")
    with review_client(store, query_log=demo_dir / "query_log.jsonl", coded_titles=own) as c:
        notes = [
            n
            for i in c.get("/v1/worklist", params={"reason": "coded", "per_page": 500}).json()["items"]
            for n in i["notes"]
        ]
        assert any("'ward manager' is on the board's own list" in n for n in notes)
