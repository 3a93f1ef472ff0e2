"""A tantivy index of a postings dump: the stand-in for the team's own keyword search engine.

BM25 (tantivy's scoring), the engine's own analysis, title weighted above description.
Built once per dump: the index folder is named by the dump's sha256 and reused.
"""

from __future__ import annotations

import json
import shutil
from dataclasses import dataclass
from pathlib import Path

import tantivy

from widen.bundle import sha256_file
from widen.text import normalise

__all__ = ["SearchIndex", "Hit", "TITLE_BOOST"]

#: How much a title match outweighs a description match (common practice, no source).
TITLE_BOOST = 3.0
_FIELDS = ["title", "description"]


@dataclass(frozen=True)
class Hit:
    id: str
    score: float
    title: str
    location: str
    employer: str


class SearchIndex:
    """Open (or build) the index of `postings` under `folder`/<sha256>. Parameters: the dump, the folder."""

    def __init__(self, postings: Path, folder: Path) -> None:
        self.sha256 = sha256_file(postings)
        self.path = Path(folder) / self.sha256[:32]
        if not (self.path / "widen-index.json").is_file():
            self._build(postings)
        self.index = tantivy.Index.open(str(self.path))
        self.index.reload()

    @classmethod
    def open_built(cls, path: Path) -> SearchIndex:
        """Open an index folder built earlier (its widen-index.json present), without its dump."""
        meta = json.loads((Path(path) / "widen-index.json").read_text(encoding="utf-8"))
        self = cls.__new__(cls)
        self.sha256 = str(meta["sha256"])
        self.path = Path(path)
        self.index = tantivy.Index.open(str(self.path))
        self.index.reload()
        return self

    @staticmethod
    def newest_built(folder: Path) -> Path | None:
        """The most recently built complete index under `folder`, if any."""
        if not Path(folder).is_dir():
            return None
        built = [p for p in Path(folder).iterdir() if (p / "widen-index.json").is_file()]
        return max(built, key=lambda p: (p / "widen-index.json").stat().st_mtime, default=None)

    @staticmethod
    def _schema() -> tantivy.Schema:
        builder = tantivy.SchemaBuilder()
        builder.add_text_field("id", stored=True, tokenizer_name="raw")
        builder.add_text_field("title", stored=True)
        builder.add_text_field("description")
        builder.add_text_field("location", stored=True, tokenizer_name="raw", index_option="basic")
        builder.add_text_field("employer", stored=True, tokenizer_name="raw", index_option="basic")
        return builder.build()

    def _build(self, postings: Path) -> None:
        partial = self.path.with_name(self.path.name + ".partial")
        shutil.rmtree(partial, ignore_errors=True)
        partial.mkdir(parents=True)
        index = tantivy.Index(self._schema(), path=str(partial))
        writer = index.writer(heap_size=100_000_000, num_threads=1)
        count = 0
        with postings.open(encoding="utf-8") as fh:
            for line in fh:
                try:
                    p = json.loads(line)
                    doc = tantivy.Document(
                        id=str(p["id"]),
                        title=str(p.get("title") or ""),
                        description=normalise(str(p.get("description") or "")),
                        location=str(p.get("location") or ""),
                        employer=str(p.get("employer") or ""),
                    )
                except (ValueError, KeyError, TypeError):
                    continue  # the same records widen train skips
                writer.add_document(doc)
                count += 1
        writer.commit()
        writer.wait_merging_threads()
        (partial / "widen-index.json").write_text(json.dumps({"sha256": self.sha256, "postings": count}) + "\n")
        shutil.rmtree(self.path, ignore_errors=True)
        partial.rename(self.path)

    def matching(self, query_text: str) -> set[str]:
        """Every posting the query matches, at any depth."""
        if not query_text.strip():
            return set()
        query = self.index.parse_query(query_text, _FIELDS)
        searcher = self.index.searcher()
        limit = max(searcher.num_docs, 1)
        return {searcher.doc(address)["id"][0] for _, address in searcher.search(query, limit).hits}

    def search(self, query_text: str, limit: int = 100) -> list[Hit]:
        """Run a query in the engine's own syntax; the best `limit` postings, best first."""
        if not query_text.strip():
            return []
        query = self.index.parse_query(query_text, _FIELDS, field_boosts={"title": TITLE_BOOST})
        searcher = self.index.searcher()
        hits = []
        for score, address in searcher.search(query, limit).hits:
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
