"""query_text against a real search engine's parser: tantivy (from PyPI), the reference for the syntax."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import tantivy

from tests.helpers import Opened, open_store
from widen.evaluation.index import SearchIndex
from widen.expansion.options import ExpansionOptions
from widen.expansion.query_text import merged_text
from widen.text.tokenize import tokens

HOSTILE = [
    '"',
    '""',
    '"staff nurse',
    "staff \\ nurse",
    "\\",
    "rn^2",
    "^",
    "title:rn",
    ":",
    "[hca TO kp]",
    "{kp}",
    "((((",
    "))",
    "(lorry driver",
    "lorry driver)",
    "AND",
    "OR OR NOT",
    "-rn +hca",
    "kitchen\x00porter",
    "\x07\x1b[31m hca",
    "nurse*",
    "driver~2",
    "a&e nurse 24/7",
    "q++ q# .qdata",
    "\u202e rn \u202c",
    "x" * 300,
]


@pytest.fixture(scope="module")
def lexicon(trained_store: Path) -> Opened:
    return open_store(trained_store)


@pytest.fixture(scope="module")
def index(demo_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> tantivy.Index:
    builder = tantivy.SchemaBuilder()
    builder.add_text_field("id", stored=True, tokenizer_name="raw")
    builder.add_text_field("title", stored=True)
    builder.add_text_field("description")
    idx = tantivy.Index(builder.build(), path=str(tmp_path_factory.mktemp("tantivy")))
    writer = idx.writer(heap_size=50_000_000, num_threads=1)
    with (demo_dir / "postings.jsonl").open(encoding="utf-8") as fh:
        for line in fh:
            p = json.loads(line)
            writer.add_document(tantivy.Document(id=p["id"], title=p["title"], description=p["description"]))
    writer.commit()
    writer.wait_merging_threads()
    idx.reload()
    return idx


def _search(index: tantivy.Index, text: str, limit: int = 10_000) -> list[str]:
    query = index.parse_query(text, ["title", "description"])
    searcher = index.searcher()
    return [searcher.doc(address)["id"][0] for _, address in searcher.search(query, limit).hits]


def test_every_demo_query_parses(lexicon: Opened, index: tantivy.Index, demo_dir: Path) -> None:
    with (demo_dir / "queries.jsonl").open(encoding="utf-8") as fh:
        queries = [json.loads(line)["query"] for line in fh]
    assert len(queries) > 100
    for q in queries:
        text = lexicon.expand(q, ExpansionOptions()).query_text
        index.parse_query(text, ["title", "description"])  # raises ValueError on a syntax error


@pytest.fixture(scope="module")
def fielded(demo_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> SearchIndex:
    """widen's evaluation index: title and description stemmed, location and employer as fields."""
    return SearchIndex(demo_dir / "open_postings.jsonl", tmp_path_factory.mktemp("fielded") / "index")


@pytest.mark.parametrize("places", ["text", "field"])
@pytest.mark.parametrize("match", ["job", "all"])
def test_every_demo_query_parses_in_every_mode(
    lexicon: Opened, fielded: SearchIndex, demo_dir: Path, places: str, match: str
) -> None:
    """query_text and full_query, for every way of building them, parse in tantivy with its fields."""
    with (demo_dir / "queries.jsonl").open(encoding="utf-8") as fh:
        queries = [json.loads(line)["query"] for line in fh]
    options = lexicon.options.with_request(places=places, match=match)
    fields = 0
    for q in queries:
        result = lexicon.expand(q, options)
        for text in (result.query_text, result.full_query):
            if text:
                fielded.parse(text)  # raises ValueError on a syntax error or an unknown field
        fields += 'location:"' in result.full_query
    # Seeker-typed queries name towns: in their field only when asked for.
    assert (fields > 0) == (places == "field")


@pytest.mark.parametrize("hostile", HOSTILE)
def test_hostile_input_cannot_break_the_parser(lexicon: Opened, index: tantivy.Index, hostile: str) -> None:
    text = lexicon.expand(hostile, ExpansionOptions()).query_text
    if not tokens(hostile):
        assert text == ""
        return
    index.parse_query(text, ["title", "description"])
    # Nothing typed becomes an operator: every clause is a quoted phrase with a boost.
    assert "title:" not in text and "~" not in text and "*" not in text


def test_expanded_query_finds_postings_that_use_another_name(lexicon: Opened, index: tantivy.Index) -> None:
    result = lexicon.expand("lorry driver", ExpansionOptions())
    assert "hgv driver" in result.query_text
    plain = set(_search(index, '"lorry driver"'))
    expanded = set(_search(index, result.query_text))
    hgv_only = set(_search(index, '"hgv driver"')) - plain
    assert plain <= expanded  # every exact match is still found
    assert hgv_only and hgv_only <= expanded  # and the postings that only say "hgv driver"
    # Merged as the README recommends, the seeker's own words rank first: every exact match outranks
    # every posting found only by expansion. (query_text alone does not promise that: a synonym in a
    # title can outscore the seeker's words in a description.)
    ranked = _search(index, merged_text('"lorry driver"^1', result.query_text))
    last_exact = max(ranked.index(pid) for pid in plain)
    first_other = min(ranked.index(pid) for pid in expanded - plain)
    assert last_exact < first_other or len(plain) == 0
