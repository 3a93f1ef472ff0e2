"""The one place that knows how a bundle is laid out on disk: its reader and its one writer.

bundles/VERSION/       one published bundle, never changed after publication
  manifest.json        what is in it and how it was made, with the sha256 of every other file
  vectors.kv           input vectors in gensim's KeyedVectors format (+ vectors.kv.vectors.npy)
  normed_vectors.npy   the input vectors at unit length, memory-mappable
  output_vectors.npy   skip-gram output vectors (syn1neg), rows aligned with vectors.kv
  neighbours_index.npy / neighbours_similarity.npy   exact top-k table, memory-mappable
  entry_stats.npy      per entry: corpus count, count in titles
  phrases.json         the phrase passes, to segment queries as the corpus was segmented
  phrase_table.tsv     mined phrases with score and count, for review
  protected.json       place and employer names (with their field and spelling), never expanded nor offered
  titles.json          every title with a duties profile: its key and how many postings name it
  title_index.npy / title_similarity.npy   per title, the titles with the most alike duties
  (bundles made before the title table have duty_rows.npy / duty_index.npy / duty_similarity.npy,
  the same table over vocabulary entries; they are read as one)
  concepts.json / concept_centroids.npy   the concepts postings are tagged with (`widen.model.concepts`;
  absent from bundles made without them)

The store around the bundles (CURRENT, the journal, decisions, search indexes) is `widen.model.store`.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable, Mapping
from pathlib import Path

import numpy as np
import numpy.typing as npt
from gensim.models import KeyedVectors
from pydantic import ValidationError

from widen.errors import BundleError
from widen.model.concepts import ConceptSet
from widen.model.manifest import FORMAT_VERSION, Manifest
from widen.model.phrases import Phraser, PhraseRow
from widen.text.forms import phrase_of_key

__all__ = ["FORMAT_VERSION", "Bundle", "BundleWriter", "read_manifest", "verify_folder", "sha256_file"]

#: How many postings an older bundle's titles are taken to have been named by (its profiles were made
#: from titles named at least that often, and the count itself was not kept).
SPLIT_HALF_POSTINGS = 20

MANIFEST = "manifest.json"
VECTORS = "vectors.kv"
NORMED_VECTORS = "normed_vectors.npy"
OUTPUT_VECTORS = "output_vectors.npy"
NEIGHBOURS_INDEX = "neighbours_index.npy"
NEIGHBOURS_SIMILARITY = "neighbours_similarity.npy"
ENTRY_STATS = "entry_stats.npy"
PHRASES = "phrases.json"
PHRASE_TABLE = "phrase_table.tsv"
PROTECTED = "protected.json"
DUTY_ROWS = "duty_rows.npy"
DUTY_INDEX = "duty_index.npy"
DUTY_SIMILARITY = "duty_similarity.npy"
TITLES = "titles.json"
TITLE_INDEX = "title_index.npy"
TITLE_SIMILARITY = "title_similarity.npy"
REQUIRED = (VECTORS, NORMED_VECTORS, OUTPUT_VECTORS, NEIGHBOURS_INDEX, NEIGHBOURS_SIMILARITY, PHRASES, PROTECTED)


def sha256_file(path: Path, chunk: int = 1 << 20) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as fh:
        while block := fh.read(chunk):
            digest.update(block)
    return digest.hexdigest()


def read_manifest(folder: Path) -> Manifest:
    """The bundle's manifest, checked against its model; BundleError saying what is wrong."""
    path = folder / MANIFEST
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError as exc:
        raise BundleError(f"no bundle {folder.name} in {folder.parent.parent}") from exc
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise BundleError(f"bundle {folder.name}: manifest.json is not valid JSON") from exc
    if not isinstance(data, dict):
        raise BundleError(f"bundle {folder.name}: manifest.json is not an object")
    if data.get("format_version") != FORMAT_VERSION:
        raise BundleError(
            f"bundle {folder.name}: format_version {data.get('format_version')!r} is not {FORMAT_VERSION}"
        )
    try:
        return Manifest.model_validate(data)
    except ValidationError as exc:
        first = exc.errors()[0]
        where = ".".join(str(p) for p in first["loc"])
        raise BundleError(f"bundle {folder.name}: manifest.json: '{where}': {first['msg']}") from exc


def verify_folder(folder: Path) -> list[str]:
    """Problems found checking every file of a bundle folder against its manifest; empty when sound."""
    version = folder.name
    try:
        manifest = read_manifest(folder)
    except BundleError as exc:
        return [str(exc)]
    problems = []
    files = manifest.files
    problems += [f"bundle {version}: manifest lists no {name}" for name in REQUIRED if name not in files]
    for name, expected in files.items():
        path = folder / name
        if not path.is_file():
            problems.append(f"bundle {version}: {name} is missing")
        elif sha256_file(path) != expected:
            problems.append(f"bundle {version}: {name} does not match its sha256 in the manifest")
    return problems


class BundleWriter:
    """Writes every file of a new bundle into `folder`, then the manifest, once, with their sha256.

    Until `finish`, the unfinished bundle opens with its draft manifest (the gate judges the
    candidate through the same reader the service uses).
    """

    def __init__(self, folder: Path) -> None:
        self.folder = Path(folder)

    def vectors(self, wv: KeyedVectors, output: npt.ArrayLike, normed: npt.ArrayLike) -> None:
        """Input vectors (gensim's own format), output vectors and unit-length input vectors."""
        wv.save(str(self.folder / VECTORS), separately=["vectors"])
        np.save(self.folder / OUTPUT_VECTORS, np.asarray(output, dtype=np.float32))
        np.save(self.folder / NORMED_VECTORS, np.asarray(normed, dtype=np.float32))

    def entry_stats(self, counts: npt.ArrayLike) -> None:
        """Per entry: corpus count, count in titles."""
        np.save(self.folder / ENTRY_STATS, np.asarray(counts, dtype=np.int64).reshape(-1, 2))

    def neighbours(self, index: npt.ArrayLike, similarity: npt.ArrayLike) -> None:
        np.save(self.folder / NEIGHBOURS_INDEX, np.asarray(index, dtype=np.int32))
        np.save(self.folder / NEIGHBOURS_SIMILARITY, np.asarray(similarity, dtype=np.float32))

    def phrases(self, phraser: Phraser, table: Iterable[PhraseRow]) -> None:
        (self.folder / PHRASES).write_text(json.dumps(phraser.to_json()) + "\n", encoding="utf-8")
        with (self.folder / PHRASE_TABLE).open("w", encoding="utf-8") as fh:
            fh.write("phrase\tscore\tcount\tpass\n")
            for row in sorted(table, key=lambda r: (-r.count, r.phrase)):
                fh.write(f"{phrase_of_key(row.phrase)}\t{row.score:.6f}\t{row.count}\t{row.pass_number}\n")

    def protected(self, fields: list[str], names: Mapping[str, tuple[str, str]]) -> None:
        """Place and employer names: key -> (the dump's field, the name as the dump writes it)."""
        data = {"fields": fields, "entries": sorted(names), "names": {k: list(v) for k, v in sorted(names.items())}}
        (self.folder / PROTECTED).write_text(json.dumps(data) + "\n", encoding="utf-8")

    def titles(self, keys: list[str], counts: list[int], index: npt.ArrayLike, similarity: npt.ArrayLike) -> None:
        """Every title with a duties profile (key, postings naming it); per title the titles (rows of the
        same list) with the most alike duties, and their cosines."""
        (self.folder / TITLES).write_text(json.dumps({"keys": keys, "counts": counts}) + "\n", encoding="utf-8")
        np.save(self.folder / TITLE_INDEX, np.asarray(index, dtype=np.int32))
        np.save(self.folder / TITLE_SIMILARITY, np.asarray(similarity, dtype=np.float32))

    def concepts(self, concepts: ConceptSet) -> None:
        concepts.write(self.folder)

    def finish(self, draft: Manifest) -> Manifest:
        """Write manifest.json: the draft with the sha256 of every other file; the manifest written."""
        files = {
            p.relative_to(self.folder).as_posix(): sha256_file(p)
            for p in sorted(self.folder.rglob("*"))
            if p.is_file() and p.name != MANIFEST
        }
        manifest = draft.model_copy(update={"files": files})
        (self.folder / MANIFEST).write_text(manifest.to_json(), encoding="utf-8")
        return manifest


class Bundle:
    """A bundle opened for reading, its arrays memory-mapped (shared between workers).

    Parameters: `folder`, the bundle's folder; `verify`, check every file's sha256 first;
    `manifest`, the draft manifest of a bundle still being written (then nothing is verified).
    """

    def __init__(self, folder: Path, verify: bool = True, manifest: Manifest | None = None) -> None:
        self.folder = Path(folder)
        version = self.folder.name
        if manifest is None and verify:
            problems = verify_folder(self.folder)
            if problems:
                raise BundleError("; ".join(problems))
        self.manifest = manifest if manifest is not None else read_manifest(self.folder)
        self.version: str = self.manifest.version
        self.created_at: str = self.manifest.created_at
        try:
            self.vectors = KeyedVectors.load(str(self.folder / VECTORS), mmap="r")
            self.normed_vectors: npt.NDArray[np.float32] = np.load(self.folder / NORMED_VECTORS, mmap_mode="r")
            self.output_vectors: npt.NDArray[np.float32] = np.load(self.folder / OUTPUT_VECTORS, mmap_mode="r")
            self.neighbour_index: npt.NDArray[np.int32] = np.load(self.folder / NEIGHBOURS_INDEX, mmap_mode="r")
            self.neighbour_similarity: npt.NDArray[np.float32] = np.load(
                self.folder / NEIGHBOURS_SIMILARITY, mmap_mode="r"
            )
            self.entry_stats: npt.NDArray[np.int64] = np.load(self.folder / ENTRY_STATS, mmap_mode="r")
            self.phraser = Phraser.from_json(json.loads((self.folder / PHRASES).read_text(encoding="utf-8")))
            names = json.loads((self.folder / PROTECTED).read_text(encoding="utf-8"))
            self.protected: frozenset[str] = frozenset(names["entries"])
            #: key -> (field, the name as the dump writes it); empty for bundles of the first format.
            self.names: dict[str, tuple[str, str]] = {k: (v[0], v[1]) for k, v in names.get("names", {}).items()}
            self._titles()
            self.concepts: ConceptSet | None = ConceptSet.read(self.folder)
        except (OSError, ValueError, KeyError) as exc:
            raise BundleError(f"bundle {version} cannot be opened: {exc}") from exc
        self.keys: list[str] = list(self.vectors.index_to_key)
        self.index: dict[str, int] = dict(self.vectors.key_to_index)
        if self.title_keys is None:  # a bundle made before the title table: its entries with a row
            self._titles_of_entries()

    def _titles(self) -> None:
        """The title table: every title with a duties profile, and its titles with the most alike duties."""
        self.title_keys: list[str] | None = None
        self.title_counts: list[int] = []
        self.title_index: npt.NDArray[np.int32] | None = None
        self.title_similarity: npt.NDArray[np.float32] | None = None
        if (self.folder / TITLES).is_file():
            data = json.loads((self.folder / TITLES).read_text(encoding="utf-8"))
            self.title_keys, self.title_counts = list(data["keys"]), [int(n) for n in data["counts"]]
            self.title_index = np.load(self.folder / TITLE_INDEX, mmap_mode="r")
            self.title_similarity = np.load(self.folder / TITLE_SIMILARITY, mmap_mode="r")

    def _titles_of_entries(self) -> None:
        """An older bundle's duties table over vocabulary entries, read as a title table: its titles are
        the entries with a row (how many postings named each was not kept: the split-half size)."""
        self.title_keys = []
        if not (self.folder / DUTY_ROWS).is_file():
            return
        rows = np.load(self.folder / DUTY_ROWS)
        index = np.load(self.folder / DUTY_INDEX)
        entries = np.flatnonzero(rows >= 0)
        order = entries[np.argsort(rows[entries])]  # entry of each row, in row order
        self.title_keys = [self.keys[int(j)] for j in order]
        self.title_counts = [SPLIT_HALF_POSTINGS] * len(order)
        row_of_entry = np.full(len(self.keys), -1, dtype=np.int64)
        row_of_entry[order] = np.arange(len(order))
        self.title_index = row_of_entry[index].astype(np.int32)  # entries -> rows of the title table
        self.title_similarity = np.load(self.folder / DUTY_SIMILARITY)

    @property
    def max_words(self) -> int:
        """The longest phrase the bundle's phrase passes form."""
        return self.manifest.max_words
