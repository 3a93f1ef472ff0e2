"""The one place that knows how a store is laid out on disk, and the only code that changes it.

STORE/
  CURRENT              version of the serving bundle (replaced by an atomic rename)
  journal.jsonl        every change of CURRENT: when, to what, from what, by whom, why
  bundles/VERSION/     one published bundle (its layout: `widen.model.bundle`)
  decisions.sqlite     reviewer decisions (+ -wal, -shm), when no database URL is configured
  search-index/SHA/    tantivy indexes `widen evaluate` and the gate built, one per postings file
  .work/               bundles being written; whatever is here at the start of a run is debris
  .lock                held by whoever changes the store
"""

from __future__ import annotations

import fcntl
import json
import os
import shutil
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from widen.clock import utc_stamp
from widen.errors import BundleError, StoreBusy
from widen.model.bundle import Bundle, read_manifest, verify_folder
from widen.model.manifest import Manifest

__all__ = ["Store", "BundleInfo"]


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


@dataclass(frozen=True)
class BundleInfo:
    version: str
    status: str  # current, candidate, rejected, retired
    created_at: str
    gate_score: float | None
    gate_passed: bool
    forced: bool
    concept_lineage: str = ""  # the concept set the bundle's tokens belong to ("" without concepts)

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


class Store:
    """A folder of bundles with one current pointer. Parameters: `root`, the store folder."""

    def __init__(self, root: Path) -> None:
        self.root = Path(root)
        self.bundles = self.root / "bundles"
        self.work = self.root / ".work"
        self.pointer = self.root / "CURRENT"
        self.journal = self.root / "journal.jsonl"
        self.decisions_path = self.root / "decisions.sqlite"
        self.search_indexes = self.root / "search-index"

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
        return sorted(p.name for p in self.bundles.iterdir() if (p / "manifest.json").is_file())

    def manifest(self, version: str) -> Manifest:
        return read_manifest(self.bundle_dir(version))

    def verify(self, version: str) -> list[str]:
        """Problems found checking every file against the manifest; empty when the bundle is sound."""
        return verify_folder(self.bundle_dir(version))

    def open_bundle(self, version: str | None = None, verify: bool = True) -> Bundle:
        """Open `version`, or the current bundle."""
        version = version or self.current_version()
        if version is None:
            raise BundleError(f"the store {self.root} has no current bundle")
        return Bundle(self.bundle_dir(version), verify=verify)

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
            gate = manifest.gate
            passed = gate is not None and gate.passed
            if version == current:
                status = "current"
            elif version in ever_current:
                status = "retired"
            elif passed:
                status = "candidate"
            else:
                status = "rejected"
            score = gate.score if gate is not None else None
            forced = gate is not None and gate.forced
            lineage = str(manifest.concepts.get("lineage", ""))
            infos.append(BundleInfo(version, status, manifest.created_at, score, passed, forced, lineage))
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
        entry = {"at": utc_stamp(), "version": version, "from": previous, "by": by, "forced": forced, "note": note}
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
