"""The one place that knows how a store and a bundle are laid out on disk.

STORE/
  CURRENT              version of the serving bundle (replaced by an atomic rename)
  journal.jsonl        every change of CURRENT: when, to what, from what, why
  bundles/VERSION/     one published bundle, never changed after publication
    manifest.json      what is in it and how it was made, with sha256 of every file
    vectors.kv         input vectors in gensim's KeyedVectors format (+ vectors.kv.vectors.npy)
    output_vectors.npy skip-gram output vectors (syn1neg), rows aligned with vectors.kv
    neighbours_index.npy / neighbours_similarity.npy   exact top-k table, memory-mappable
    entry_stats.npy    per entry: corpus count, count in titles
    phrases.json       the phrase passes, to segment queries as the corpus was segmented
    phrase_table.tsv   mined phrases with score and count, for review
    protected.json     place and employer names that are never expanded nor offered
  .work/               bundles being written; whatever is here at the start of a run is debris
  .lock                held by whoever changes the store
"""

from __future__ import annotations

import fcntl
import hashlib
import json
import os
import shutil
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
from gensim.models import KeyedVectors

from training.phrases import Phraser

__all__ = [
    "FORMAT_VERSION",
    "Store",
    "StoreBusy",
    "BundleError",
    "BundleInfo",
    "Bundle",
    "new_version",
    "write_manifest",
    "sha256_file",
]

FORMAT_VERSION = 1

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


class StoreBusy(RuntimeError):
    """Another process holds the store's lock."""


class BundleError(RuntimeError):
    """A bundle is missing, incomplete or fails verification."""


def sha256_file(path: Path, chunk: int = 1 << 20) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as fh:
        while block := fh.read(chunk):
            digest.update(block)
    return digest.hexdigest()


def new_version(seed_text: str, now: float | None = None) -> str:
    """Sortable by time (UTC, to the microsecond) with a short hash of what made it."""
    now = time.time() if now is None else now
    stamp = time.strftime("%Y%m%dT%H%M%S", time.gmtime(now)) + f"{int(now * 1e6) % 1_000_000:06d}Z"
    short = hashlib.sha256(f"{seed_text}|{now}".encode()).hexdigest()[:8]
    return f"{stamp}-{short}"


def _fsync_dir(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _fsync_tree(path: Path) -> None:
    for item in path.rglob("*"):
        if item.is_file():
            with item.open("rb") as fh:
                os.fsync(fh.fileno())
    _fsync_dir(path)


def write_manifest(folder: Path, manifest: dict[str, Any]) -> dict[str, Any]:
    """Add `files` (sha256 of every other file) and write manifest.json."""
    files = {
        p.relative_to(folder).as_posix(): sha256_file(p)
        for p in sorted(folder.rglob("*"))
        if p.is_file() and p.name != MANIFEST
    }
    manifest = dict(manifest, files=files)
    (folder / MANIFEST).write_text(json.dumps(manifest, indent=2, sort_keys=False) + "\n", encoding="utf-8")
    return manifest


def read_manifest(folder: Path) -> dict[str, Any]:
    path = folder / MANIFEST
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError as exc:
        raise BundleError(f"no bundle {folder.name} in {folder.parent.parent}") from exc
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise BundleError(f"bundle {folder.name}: manifest.json is not valid JSON") from exc
    if not isinstance(data, dict):
        raise BundleError(f"bundle {folder.name}: manifest.json is not an object")
    return data


def verify_folder(folder: Path) -> list[str]:
    """Problems found checking every file of a bundle folder against its manifest."""
    version = folder.name
    try:
        manifest = read_manifest(folder)
    except BundleError as exc:
        return [str(exc)]
    if manifest.get("format_version") != FORMAT_VERSION:
        return [f"bundle {version}: format_version {manifest.get('format_version')!r} is not {FORMAT_VERSION}"]
    problems = []
    files = manifest.get("files") or {}
    required = (VECTORS, NORMED_VECTORS, OUTPUT_VECTORS, NEIGHBOURS_INDEX, NEIGHBOURS_SIMILARITY, PHRASES, PROTECTED)
    problems += [f"bundle {version}: manifest lists no {name}" for name in required if name not in files]
    for name, expected in files.items():
        path = folder / name
        if not path.is_file():
            problems.append(f"bundle {version}: {name} is missing")
        elif sha256_file(path) != expected:
            problems.append(f"bundle {version}: {name} does not match its sha256 in the manifest")
    return problems


@dataclass(frozen=True)
class BundleInfo:
    version: str
    status: str  # current, candidate, rejected, retired
    created_at: str
    gate_score: float | None
    gate_passed: bool
    forced: bool

    def as_dict(self) -> dict[str, Any]:
        return {
            "version": self.version,
            "status": self.status,
            "created_at": self.created_at,
            "gate_score": self.gate_score,
            "gate_passed": self.gate_passed,
            "forced": self.forced,
        }


class Store:
    """A folder of bundles with one current pointer. Parameters: `root`, the store folder."""

    def __init__(self, root: Path) -> None:
        self.root = Path(root)
        self.bundles = self.root / "bundles"
        self.work = self.root / ".work"
        self.pointer = self.root / "CURRENT"
        self.journal = self.root / "journal.jsonl"
        self.decisions_path = self.root / "decisions.sqlite"

    # -- reading -------------------------------------------------------------------------

    def current_version(self) -> str | None:
        try:
            version = self.pointer.read_text(encoding="utf-8").strip()
        except FileNotFoundError:
            return None
        return version or None

    def bundle_dir(self, version: str) -> Path:
        if not version or "/" in version or version.startswith("."):
            raise BundleError(f"not a bundle version: {version!r}")
        return self.bundles / version

    def versions(self) -> list[str]:
        if not self.bundles.is_dir():
            return []
        return sorted(p.name for p in self.bundles.iterdir() if (p / MANIFEST).is_file())

    def manifest(self, version: str) -> dict[str, Any]:
        return read_manifest(self.bundle_dir(version))

    def verify(self, version: str) -> list[str]:
        """Problems found checking every file against the manifest; empty when the bundle is sound."""
        return verify_folder(self.bundle_dir(version))

    def read_journal(self) -> list[dict[str, Any]]:
        try:
            lines = self.journal.read_text(encoding="utf-8").splitlines()
        except FileNotFoundError:
            return []
        entries = []
        for line in lines:
            try:
                entries.append(json.loads(line))
            except json.JSONDecodeError:
                continue  # a torn last line from a crash mid-append
        return entries

    def listing(self) -> list[BundleInfo]:
        current = self.current_version()
        ever_current = {e.get("version") for e in self.read_journal()}
        infos = []
        for version in self.versions():
            try:
                manifest = self.manifest(version)
            except BundleError:
                continue
            gate = manifest.get("gate") or {}
            if version == current:
                status = "current"
            elif version in ever_current:
                status = "retired"
            elif gate.get("passed"):
                status = "candidate"
            else:
                status = "rejected"
            infos.append(
                BundleInfo(
                    version,
                    status,
                    str(manifest.get("created_at", "")),
                    gate.get("score"),
                    bool(gate.get("passed")),
                    bool(gate.get("forced")),
                )
            )
        return infos

    def rollback_target(self) -> str | None:
        """The bundle that served before the current one, skipping any that were rolled back from."""
        current = self.current_version()
        journal = self.read_journal()
        rolled_back: set[str] = set()
        for entry in journal:
            # A bundle rolled back from is skipped until someone promotes it again.
            if entry.get("by") == "rollback" and entry.get("from"):
                rolled_back.add(entry["from"])
            rolled_back.discard(entry.get("version", ""))
        available = set(self.versions())
        for entry in reversed(journal):
            version = entry.get("version")
            if version and version != current and version not in rolled_back and version in available:
                return str(version)
        return None

    # -- changing ------------------------------------------------------------------------

    @contextmanager
    def locked(self) -> Iterator[None]:
        """Hold the store's lock; a second writer fails at once rather than waiting."""
        self.root.mkdir(parents=True, exist_ok=True)
        fd = os.open(self.root / ".lock", os.O_RDWR | os.O_CREAT, 0o644)
        try:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError as exc:
                raise StoreBusy(f"another widen process is changing the store {self.root}; try again later") from exc
            yield
        finally:
            os.close(fd)

    def clear_debris(self) -> list[str]:
        """Remove half-written bundles left by an interrupted run (call with the lock held)."""
        removed = []
        if self.work.is_dir():
            for item in self.work.iterdir():
                shutil.rmtree(item, ignore_errors=True)
                removed.append(item.name)
        return removed

    def new_work_dir(self, version: str) -> Path:
        path = self.work / f"{version}.{os.getpid()}"
        path.mkdir(parents=True)
        return path

    def publish(self, work_dir: Path, version: str) -> Path:
        """fsync the written bundle and rename it into bundles/ in one step."""
        _fsync_tree(work_dir)
        self.bundles.mkdir(parents=True, exist_ok=True)
        target = self.bundle_dir(version)
        os.rename(work_dir, target)
        _fsync_dir(self.bundles)
        return target

    def set_current(self, version: str, by: str, forced: bool = False, note: str = "") -> None:
        """Journal the change, then switch the pointer by an atomic rename."""
        previous = self.current_version()
        entry = {
            "at": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
            "version": version,
            "from": previous,
            "by": by,
            "forced": forced,
            "note": note,
        }
        with self.journal.open("a", encoding="utf-8") as fh:
            fh.write(json.dumps(entry) + "\n")
            fh.flush()
            os.fsync(fh.fileno())
        tmp = self.root / f".CURRENT.{os.getpid()}"
        with tmp.open("w", encoding="utf-8") as fh:
            fh.write(version + "\n")
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, self.pointer)
        _fsync_dir(self.root)

    def prune(self, keep: int) -> list[str]:
        """Keep the newest `keep` bundles, the current one and the rollback target; remove the rest."""
        spare = {self.current_version(), self.rollback_target()}
        versions = self.versions()
        removed = []
        for version in versions[:-keep] if keep < len(versions) else []:
            if version in spare:
                continue
            # Move aside first so a half-deleted bundle never looks like a bundle.
            aside = self.work / f"prune-{version}"
            self.work.mkdir(parents=True, exist_ok=True)
            os.rename(self.bundle_dir(version), aside)
            shutil.rmtree(aside, ignore_errors=True)
            removed.append(version)
        return removed


class Bundle:
    """A published bundle opened for reading, its arrays memory-mapped (shared between workers).

    Parameters: `folder`, the bundle's folder; `verify`, check every file's sha256 first.
    """

    def __init__(self, folder: Path, verify: bool = True) -> None:
        self.folder = Path(folder)
        version = self.folder.name
        if verify:
            problems = verify_folder(self.folder)
            if problems:
                raise BundleError("; ".join(problems))
        self.manifest = read_manifest(self.folder)
        self.version: str = self.manifest["version"]
        self.created_at: str = self.manifest["created_at"]
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
            self.protected: frozenset[str] = frozenset(
                json.loads((self.folder / PROTECTED).read_text(encoding="utf-8"))["entries"]
            )
        except (OSError, ValueError, KeyError) as exc:
            raise BundleError(f"bundle {version} cannot be opened: {exc}") from exc
        self.keys: list[str] = list(self.vectors.index_to_key)
        self.index: dict[str, int] = dict(self.vectors.key_to_index)


def open_bundle(store: Store, version: str | None = None, verify: bool = True) -> Bundle:
    """Open `version`, or the current bundle, of a store."""
    version = version or store.current_version()
    if version is None:
        raise BundleError(f"the store {store.root} has no current bundle")
    return Bundle(store.bundle_dir(version), verify=verify)
