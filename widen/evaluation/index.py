"""A tantivy index of a postings dump: the stand-in for the team's own keyword search engine.

BM25 (tantivy's scoring), the engine's own analysis with English stemming (`en_stem`: words
lower-cased and stemmed, the strongest plain set-up the engine offers), title weighted above
description. Built once per postings file and window: the index folder is named by the file's
sha256 (and the window), and reused. With a `Tagger`, every posting is also tagged with its
concept tokens in a `concepts` field of its own, as a board's indexing pipeline would (`widen tag`);
the folder is then named by the bundle that tagged it too.
"""

from __future__ import annotations

import json
import shutil
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from datetime import date, timedelta
from pathlib import Path
from typing import Protocol

import tantivy

from widen.model.bundle import sha256_file
from widen.text.tokenize import normalise

__all__ = ["SearchIndex", "Hit", "Tagger", "TITLE_BOOST", "FIELDS", "CONCEPT_FIELD"]

#: How much a title match outweighs a description match (common practice, no source).
TITLE_BOOST = 3.0
FIELDS = ["title", "description"]
#: Changes whenever the schema or the analysis changes; an index of another version is rebuilt.
SCHEMA_VERSION = 4
_MARKER = "widen-index.json"
#: The index field the concept tokens go in (the expansion option `concept_field` names it in queries).
CONCEPT_FIELD = "concepts"
_TAG_BATCH = 1024


class Tagger(Protocol):
    """What tags postings with concept tokens (`widen.expansion.lexicon.Lexicon.tag`)."""

    version: str

    @property
    def concept_lineage(self) -> str | None: ...

    def tag(self, postings: Sequence[tuple[str, str]]) -> list[list[str]]: ...


@dataclass(frozen=True)
class Hit:
    id: str
    score: float
    title: str
    location: str
    employer: str


def _analyzer() -> tantivy.TextAnalyzer:
    """The analysis of tantivy's `en_stem` tokenizer, built again to analyse text outside the index
    (RM3 counts feedback terms with it): split on non-alphanumerics, drop tokens over 40 bytes,
    lower-case, English (Porter2) stemming."""
    return (
        tantivy.TextAnalyzerBuilder(tantivy.Tokenizer.simple())
        .filter(tantivy.Filter.remove_long(40))
        .filter(tantivy.Filter.lowercase())
        .filter(tantivy.Filter.stemmer("english"))
        .build()
    )


def _rows(postings: Path, days: int | None) -> Iterator[dict[str, object]]:
    """The postings of a dump; with `days`, only those posted in the last `days` days of the dump."""
    rows = []
    with postings.open(encoding="utf-8") as fh:
        for line in fh:
            try:
                row = json.loads(line)
            except ValueError:
                continue  # the same records widen train skips
            if isinstance(row, dict):
                rows.append(row)
    if days is not None:
        dated = [str(r.get("posted_at") or "") for r in rows]
        newest = max((d for d in dated if d), default="")
        if newest:
            first = (date.fromisoformat(newest[:10]) - timedelta(days=days - 1)).isoformat()
            rows = [r for r, d in zip(rows, dated, strict=True) if d[:10] >= first]
    yield from rows


class SearchIndex:
    """Open (or build) the index of `postings` under `folder`. Parameters: the dump, the folder, and
    `days` to index only the postings of the dump's last `days` days (the open postings)."""

    def __init__(self, postings: Path, folder: Path, days: int | None = None, tagger: Tagger | None = None) -> None:
        self.sha256 = sha256_file(postings)
        name = self.sha256[:32] + (f"-{days}d" if days else "") + (f"-c{tagger.version}" if tagger else "")
        self.path = Path(folder) / name
        marker = self.path / _MARKER
        if not marker.is_file() or json.loads(marker.read_text()).get("schema") != SCHEMA_VERSION:
            self._build(postings, days, tagger)
        self._open()

    def _open(self) -> None:
        self.index = tantivy.Index.open(str(self.path))
        self.index.reload()
        self.analyzer = _analyzer()
        meta = json.loads((self.path / _MARKER).read_text(encoding="utf-8"))
        self.size = int(meta["postings"])
        #: The bundle whose concept tokens the index holds; None for an index without them.
        self.tagged_by: str | None = meta.get("tagged_by")
        #: The concept lineage of those tokens: a bundle of the same lineage reads them (None without).
        self.tagged_lineage: str | None = meta.get("tagged_lineage")
        self._ids: set[str] | None = None

    @classmethod
    def open_built(cls, path: Path) -> SearchIndex:
        """Open an index folder built earlier (its marker present), without its dump."""
        meta = json.loads((Path(path) / _MARKER).read_text(encoding="utf-8"))
        self = cls.__new__(cls)
        self.sha256 = str(meta["sha256"])
        self.path = Path(path)
        self._open()
        return self

    @staticmethod
    def newest_built(folder: Path) -> Path | None:
        """The most recently built complete index of the current schema under `folder`, if any."""
        if not Path(folder).is_dir():
            return None
        built = [
            p
            for p in Path(folder).iterdir()
            if (p / _MARKER).is_file() and json.loads((p / _MARKER).read_text()).get("schema") == SCHEMA_VERSION
        ]
        return max(built, key=lambda p: (p / _MARKER).stat().st_mtime, default=None)

    @staticmethod
    def _schema() -> tantivy.Schema:
        builder = tantivy.SchemaBuilder()
        builder.add_text_field("id", stored=True, tokenizer_name="raw")
        builder.add_text_field("title", stored=True, tokenizer_name="en_stem")
        builder.add_text_field("description", stored=True, tokenizer_name="en_stem")
        builder.add_text_field("location", stored=True, tokenizer_name="raw", index_option="basic")
        builder.add_text_field("employer", stored=True, tokenizer_name="raw", index_option="basic")
        builder.add_text_field(CONCEPT_FIELD, stored=False, tokenizer_name="default", index_option="freq")
        return builder.build()

    def _build(self, postings: Path, days: int | None, tagger: Tagger | None) -> None:
        partial = self.path.with_name(self.path.name + ".partial")
        shutil.rmtree(partial, ignore_errors=True)
        partial.mkdir(parents=True)
        index = tantivy.Index(self._schema(), path=str(partial))
        writer = index.writer(heap_size=100_000_000, num_threads=1)
        count = 0
        batch: list[dict[str, str]] = []

        def flush() -> None:
            pairs = [(d["title"], d["description"]) for d in batch]
            tokens = tagger.tag(pairs) if tagger is not None else [[] for _ in batch]
            for d, found in zip(batch, tokens, strict=True):
                writer.add_document(tantivy.Document(**d, **{CONCEPT_FIELD: " ".join(found)}))
            batch.clear()

        for p in _rows(postings, days):
            if "id" not in p:
                continue  # the same records widen train skips
            batch.append(
                {
                    "id": str(p["id"]),
                    "title": str(p.get("title") or ""),
                    "description": normalise(str(p.get("description") or "")),
                    "location": str(p.get("location") or ""),
                    "employer": str(p.get("employer") or ""),
                }
            )
            count += 1
            if len(batch) >= _TAG_BATCH:
                flush()
        flush()
        writer.commit()
        writer.wait_merging_threads()
        meta = {
            "sha256": self.sha256,
            "postings": count,
            "days": days,
            "schema": SCHEMA_VERSION,
            "tagged_by": tagger.version if tagger is not None else None,
            "tagged_lineage": tagger.concept_lineage if tagger is not None else None,
        }
        (partial / _MARKER).write_text(json.dumps(meta) + "\n")
        shutil.rmtree(self.path, ignore_errors=True)
        partial.rename(self.path)

    # -- asking the engine ------------------------------------------------------------------

    @property
    def ids(self) -> set[str]:
        """Every posting id the index holds."""
        if self._ids is None:
            searcher = self.index.searcher()
            found = searcher.search(tantivy.Query.all_query(), max(searcher.num_docs, 1)).hits
            self._ids = {searcher.doc(address)["id"][0] for _, address in found}
        return self._ids

    def parse(self, query_text: str, boosted: bool = True) -> tantivy.Query:
        """A query in the engine's syntax, over title and description (title boosted); ValueError if invalid."""
        boosts = {"title": TITLE_BOOST} if boosted else {}
        return self.index.parse_query(query_text, FIELDS, field_boosts=boosts)

    def run(self, query: tantivy.Query, limit: int = 100) -> list[tuple[str, float]]:
        """The best `limit` postings for a query object: (id, score), best first."""
        searcher = self.index.searcher()
        return [(searcher.doc(a)["id"][0], float(s)) for s, a in searcher.search(query, limit).hits]

    def matching(self, query_text: str) -> set[str]:
        """Every posting the query matches, at any depth."""
        if not query_text.strip():
            return set()
        searcher = self.index.searcher()
        limit = max(searcher.num_docs, 1)
        return {searcher.doc(a)["id"][0] for _, a in searcher.search(self.parse(query_text, False), limit).hits}

    def search(self, query_text: str, limit: int = 100) -> list[Hit]:
        """Run a query in the engine's own syntax; the best `limit` postings, best first."""
        if not query_text.strip():
            return []
        searcher = self.index.searcher()
        hits = []
        for score, address in searcher.search(self.parse(query_text), limit).hits:
            doc = searcher.doc(address)
            hits.append(
                Hit(
                    doc["id"][0],
                    float(score),
                    (doc.get_first("title") or ""),
                    (doc.get_first("location") or ""),
                    (doc.get_first("employer") or ""),
                )
            )
        return hits

    def texts(self, query: tantivy.Query, limit: int) -> list[tuple[float, str]]:
        """The best `limit` postings for a query: (score, title and description as stored)."""
        searcher = self.index.searcher()
        out = []
        for score, address in searcher.search(query, limit).hits:
            doc = searcher.doc(address)
            out.append((float(score), f"{doc.get_first('title') or ''}\n{doc.get_first('description') or ''}"))
        return out

    def analyse(self, text: str) -> list[str]:
        """The terms the engine would index for a text."""
        return list(self.analyzer.analyze(text))

    def term(self, field: str, term: str) -> tantivy.Query:
        """The query for one already-analysed term in one field."""
        return tantivy.Query.term_query(self.index.schema, field, term)
