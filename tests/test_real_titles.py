"""Real job titles (the ESCO occupations of the European Commission, demo_postings/data): a small
Fellhaven Jobs board, trained once, and what widen does with its titles, the long tail included."""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path

import pytest

from demo_postings.fellhaven import occupations, part_of
from demo_postings.fellhaven_board import bands
from demo_postings.generate import generate
from tests.helpers import Opened, open_store, train_quietly
from training.config import load_config
from widen.cli import main
from widen.evaluation.runs import read_queries
from widen.evaluation.scorecard import query_scorecard
from widen.text.forms import PHRASE_JOINER, phrase_of_key, phrase_of_text


@pytest.fixture(scope="module")
def fellhaven_store(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    data = tmp_path_factory.mktemp("fellhaven")
    generate(data, 6000, seed=3, board="fellhaven")
    store = tmp_path_factory.mktemp("fellhaven-store")
    config = load_config(None, {"gate.pairs": str(data / "pairs.tsv")})
    train_quietly(data / "postings.jsonl", store, config, force=True)
    return data, store


@pytest.fixture(scope="module")
def fellhaven(fellhaven_store: tuple[Path, Path]) -> tuple[Path, Opened]:
    data, store = fellhaven_store
    return data, open_store(store)


def test_the_board_is_built_from_the_real_classification(fellhaven: tuple[Path, Opened]) -> None:
    data, _ = fellhaven
    jobs = occupations()
    # The file the project copied: ESCO's occupations whose ISCO-08 major group is 1, 3, 5, 7 or 9
    # (1,637 of them, demo_postings/data/README.md), each with a preferred label of its own.
    assert len(jobs) == 1637 and len({j.preferred.lower() for j in jobs}) == 1637
    assert {j.major for j in jobs} == {"1", "3", "5", "7", "9"}
    assert all(len(j.group) == 4 and j.group.isdigit() for j in jobs)
    truth = json.loads((data / "truth.json").read_text(encoding="utf-8"))
    assert "ESCO" in truth["source"]
    queries = [json.loads(line) for line in (data / "queries.jsonl").open(encoding="utf-8")]
    assert {q["part"] for q in queries} == {"tune", "report"}
    assert all(q["part"] == part_of(next(j for j in jobs if j.preferred == q["family"])) for q in queries[:50])
    # A long tail, as real boards have: most distinct titles named by fewer than 10 postings.
    assert Counter(q["band"] for q in queries)["tail"] > len(queries) / 2


def test_bands_split_the_postings_into_head_torso_and_tail() -> None:
    counts = Counter({"cook": 50, "baker": 30, "porter": 12, "glass engraver": 9, "farrier": 1})
    got = bands(counts)
    # Head: the most used titles that together cover half the postings (102 here: cook alone is 50,
    # cook and baker 80); tail: fewer than 10 postings.
    assert got == {"cook": "head", "baker": "head", "porter": "torso", "glass engraver": "tail", "farrier": "tail"}


def test_no_multi_word_title_expands_to_a_single_word_that_is_not_a_title(fellhaven: tuple[Path, Opened]) -> None:
    """Every title of the board's bundle of two words or more, expanded: a single-word expansion must be
    a title some posting names (with a duties profile), never a bare word of the postings."""
    _, opened = fellhaven
    lex = opened.lexicon
    titles = [k for k in lex.titles if PHRASE_JOINER in k]
    assert len(titles) > 300
    offenders = []
    for key in titles:
        for segment in opened.expand(phrase_of_key(key)).segments:
            for e in segment.expansions:
                bare = " " not in e.phrase and e.source not in ("spelling", "pattern", "pinned")
                if bare and e.phrase not in lex.title_row:
                    offenders.append((phrase_of_key(key), e.phrase))
    assert offenders == []


def test_a_title_seen_once_is_judged_by_what_one_posting_can_show(fellhaven: tuple[Path, Opened]) -> None:
    """The bundle measures how alike one job's profiles are at each size: two single postings of one
    job share less than two large samples do, and both far more than two different jobs by chance."""
    _, opened = fellhaven
    lex = opened.lexicon
    one, many = lex.same_job(1, 1), lex.same_job(16, 16)
    assert 0.0 < one < many <= 1.0
    assert lex.chance(1, 1, "0.99") < one / 2


def test_real_titles_expand_to_the_same_or_a_related_occupation(fellhaven: tuple[Path, Opened]) -> None:
    """On real titles (ESCO; the truth: the occupation's own names, and the occupations of its ISCO-08
    unit group as related), most of what widen adds is right. A floor well under the figures measured
    on the full-size board (docs/real-titles.md), not a tuned target."""
    data, opened = fellhaven
    truth = json.loads((data / "truth.json").read_text(encoding="utf-8"))
    card = query_scorecard(opened.lexicon, truth, read_queries(data / "queries.jsonl"), opened.options)
    assert card["all"]["expansions"] > 100
    assert card["all"]["precision"] >= 0.75, card["all"]
    assert card["all"]["equivalent_precision"] >= 0.65, card["all"]


def test_evaluate_reports_by_part_and_band(fellhaven_store: tuple[Path, Path], tmp_path: Path) -> None:
    """`widen evaluate` on a board whose queries carry a part and a band: the tables by part and band,
    whose means, weighted by their queries, are the overall means (the same queries, only grouped),
    and the title queries' expansions against the truth."""
    data, store = fellhaven_store
    queries = tmp_path / "q.jsonl"
    lines = (data / "queries.jsonl").read_text(encoding="utf-8").splitlines(keepends=True)
    queries.write_text("".join(lines[:160]), encoding="utf-8")
    args = ["evaluate", "--store", str(store), "--queries", str(queries), "--truth", str(data / "truth.json")]
    assert main([*args, "--postings", str(data / "open_postings.jsonl"), "--out", str(tmp_path / "eval")]) == 0
    report = json.loads((tmp_path / "eval" / "report.json").read_text(encoding="utf-8"))
    parts = report["parts"]
    assert set(parts) == {"tune", "report"}
    assert sum(p["queries"] for p in parts.values()) == report["queries"]
    for method in ("bag_of_words", "widen"):
        pooled = sum(p["queries"] * p["methods"][method]["recall@100"] for p in parts.values()) / report["queries"]
        assert pooled == pytest.approx(report["methods"][method]["recall@100"], abs=1e-6)
        for entry in parts.values():
            bands = entry["bands"].values()
            assert sum(b["queries"] for b in bands) == entry["queries"]
            pooled = sum(b["queries"] * b["methods"][method]["ndcg@10"] for b in bands) / entry["queries"]
            assert pooled == pytest.approx(entry["methods"][method]["ndcg@10"], abs=1e-6)
    card = report["title_scorecard"]
    assert card["all"]["queries"] > 0 and 0.0 <= card["all"]["precision"] <= 1.0
    text = (tmp_path / "eval" / "report.md").read_text(encoding="utf-8")
    assert "## By part and frequency band of the query's title" in text
    assert "| report, tail (" in text or "| tune, tail (" in text


def _plain(text: str) -> str:
    return " ".join("".join(c if c.isalnum() else " " for c in text.lower()).split())


def test_a_concepts_label_names_real_titles_of_its_postings(fellhaven: tuple[Path, Opened]) -> None:
    """Each concept's label is the titles its postings use most: on this board they must be real ESCO
    names (the classification the board is built from, demo_postings/data) and the titles of postings
    the bundle tags with that concept. Measured on the 20k board: 97% of label titles are ESCO names."""
    data, opened = fellhaven
    concepts = opened.lexicon.concepts
    assert concepts is not None
    # The label's titles are title-table entries, so a posting titled "junior glass blower" counts for
    # "glass blower": the check is the label's titles against the ESCO names, and that one of them is a
    # title its tagged postings use (measured on this fixture: 0.88 of concepts with 3+ titles).
    names = {_plain(name) for job in occupations() for name in job.names}
    labelled = [title for label in concepts.labels for title in label]
    assert len(labelled) > 100
    assert sum(_plain(t) in names for t in labelled) / len(labelled) >= 0.9
    rows = [json.loads(line) for line in (data / "postings.jsonl").open(encoding="utf-8")]
    titles_of: dict[str, set[str]] = {}
    for row, tokens in zip(rows, opened.lexicon.tag([(r["title"], r["description"]) for r in rows]), strict=True):
        for token in tokens:
            titles_of.setdefault(token, set()).add(_plain(row["title"]))
    checked = [
        token
        for token in titles_of
        if (flat := concepts.flat(token)) is not None and concepts.labels[flat] and len(titles_of[token]) >= 3
    ]
    named = [t for t in checked if {_plain(x) for x in concepts.labels[concepts.flat(t) or 0]} & titles_of[t]]
    assert len(checked) > 50 and len(named) / len(checked) >= 0.8, (len(named), len(checked))


def test_a_server_prepares_the_titles_seekers_type_first(fellhaven: tuple[Path, Opened]) -> None:
    """`Lexicon.busiest`, what a server prepares first: every title with a duties profile, busiest first,
    then the other entries by use, each once. On a board of real titles, the first hundred are titles
    of the ESCO classification the board was made of (its labels, source: demo_postings/data), where
    the entries by use alone begin with the words of any posting."""
    _, opened = fellhaven
    lex = opened.lexicon
    order = lex.busiest()
    assert len(order) == len(set(order)) == len(set(lex.keys) | set(lex.titles))
    titled = order[: len(lex.titles)]
    assert set(titled) == set(lex.titles)
    assert [lex.postings_of(k) for k in titled] == sorted((lex.postings_of(k) for k in titled), reverse=True)
    labels = {phrase_of_text(name) for job in occupations() for name in job.names}
    first = [phrase_of_key(k) for k in order[:100]]
    assert sum(p in labels for p in first) >= 90, [p for p in first if p not in labels][:10]
    by_use = [phrase_of_key(lex.keys[j]) for j in sorted(range(len(lex.keys)), key=lambda j: -lex.counts[j])[:100]]
    assert sum(p in labels for p in by_use) < 50


def test_kept_answers_equal_the_reference_on_the_real_title_log(fellhaven_store: tuple[Path, Path]) -> None:
    """The day's log of a board of real titles (the ESCO occupations) reaches what a demo log seldom
    does: long titles composed of known parts, head words beside another job, titles with no vector.
    Answered twice with what expansion keeps (composed and head-word spans kept by the query's jobs,
    answers joined from their spans' pieces; the busiest third of the entries prepared, as a service
    does), every answer is byte-identical to the reference that keeps nothing, explained or not."""
    from widen.expansion.expand import prepare

    data, store = fellhaven_store
    logged = dict.fromkeys(json.loads(line)["q"] for line in (data / "query_log.jsonl").open(encoding="utf-8"))
    queries = list(logged)[:1500]
    fast = open_store(store)
    reference = fast.reference()
    prepare(fast.lexicon, fast.cache, fast.options, len(fast.lexicon.keys) // 3)
    for explain in (False, True):
        for _ in range(2):  # the second time from what the first kept
            for q in queries[:: 1 if not explain else 5]:
                got = fast.expand(q, fast.options, explain=explain).model_dump_json()
                assert got == reference.expand(q, fast.options, explain=explain).model_dump_json(), q
    kept = list(fast.cache.spans)
    # The third prepared is titles (`Lexicon.busiest`), some with no vector; others were worked out on
    # first use: both ways were compared.
    lex = fast.lexicon
    prepared = set(lex.busiest()[: len(lex.keys) // 3])
    assert any(k not in lex.index for k in prepared)
    assert any(key not in prepared and key in lex.title_row for key, parts, *_ in kept if not parts)
    assert any(parts for _, parts, *_ in kept), "no composed span was kept: the log did not test them"
    assert any(jobs for *_, jobs in kept), "no head word was kept by its query's jobs: the log did not test them"
    assert len(fast.cache.pieces) > 100


def test_spelling_reads_only_words_of_a_near_length_and_finds_what_the_whole_list_gives(
    fellhaven: tuple[Path, Opened],
) -> None:
    """The speller searches only the words whose length is within the edits allowed (an edit changes a
    length by one at most). Against rapidfuzz's search of the whole word list (the reference, the
    library the speller uses): the same 20 nearest, so the same correction, for every title word of
    the real-title board slipped once (a letter dropped, added or two swapped) and as typed."""
    import random

    from rapidfuzz import distance, process

    from widen.expansion.spelling import Speller

    _, opened = fellhaven
    speller = Speller(opened.lexicon)
    rnd = random.Random(5)
    words = [w for w in speller.words if len(w) >= 5]
    typed = []
    for w in rnd.sample(words, 600):
        i = rnd.randrange(len(w) - 1)
        typed += [w, w[:i] + w[i + 1 :], w[:i] + "e" + w[i:], w[:i] + w[i + 1] + w[i] + w[i + 2 :]]
    corrected = 0
    for word in typed:
        edits = 1 if len(word) <= 8 else 2
        whole = process.extract(word, speller.words, scorer=distance.OSA.distance, score_cutoff=edits, limit=20)
        assert [(w, d, n) for w, d, n in whole] == speller._near_in_length(word, edits), word
        corrected += speller.correct(word) not in (None, word)
    assert corrected > 600  # most slips were corrected: the comparison was between real searches


def test_the_phrase_passes_phrase_as_gensim_does_on_real_text(fellhaven: tuple[Path, Opened]) -> None:
    """widen applies each frozen phrase pass with a loop of its own (`widen.model.phrases._Pass`);
    gensim's `FrozenPhrases[sentence]` is the reference. On every sentence of the real-title board's
    postings (ESCO titles and descriptions, demo_postings/data) and every query of its day's log,
    both passes in turn, the same tokens."""
    from widen.text.tokenize import sentences, tokens

    data, opened = fellhaven
    phraser = opened.lexicon.phraser
    assert len(phraser.passes) >= 2
    texts = []
    for line in (data / "postings.jsonl").open(encoding="utf-8"):
        posting = json.loads(line)
        texts += sentences(posting["title"] + ". " + posting["description"])
    texts += [tokens(json.loads(line)["q"]) for line in (data / "query_log.jsonl").open(encoding="utf-8")]
    joined = 0
    for sentence in texts:
        theirs = ours = sentence
        for frozen, applied in zip(phraser.passes, phraser._applied, strict=True):
            theirs, ours = frozen[theirs], applied(ours)
            assert ours == theirs, sentence
        joined += len(ours) < len(sentence)
    assert len(texts) > 20_000 and joined > len(texts) / 10  # phrases were formed, not only words passed
