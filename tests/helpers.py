"""What several test modules share: training a small store, opening a bundle as the service does, files.

Fixtures live in `conftest.py` and use these; a test module imports from here, never from conftest.
"""

from __future__ import annotations

import io
import json
import os
import shutil
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

from training.config import TrainConfig, load_config
from training.pipeline import TrainOutcome, train
from widen.clock import new_version
from widen.decisions.decision import Decision, DecisionSet
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import expand
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.result import ExpansionResult
from widen.model.store import Store

__all__ = [
    "BROKEN",
    "HOSTILE",
    "IN_CI",
    "NONE",
    "SMALL_POSTINGS",
    "Opened",
    "decided",
    "demo_config",
    "open_store",
    "republish",
    "train_quietly",
    "until",
    "write_jsonl",
]

SMALL_POSTINGS = 8000
#: Config overrides that train a much worse model (one epoch, almost no learning, no duties profiles).
BROKEN = {"embedding.epochs": 1, "embedding.alpha": 1e-6, "embedding.seed": 99, "duties.min_postings": 10**9}
#: Strings a seeker, an employer or a reviewer could send that must reach a page as text only.
HOSTILE = [
    "<script>alert('x')</script>",
    '"><img src=x onerror=alert(1)>',
    "' onmouseover='alert(1)' x='",
    "javascript:alert(document.cookie)",
    "</textarea><svg onload=alert(1)>",
    "\u202eevird yrrol\u202c nurse",
    "ممرضة staff nurse עברית",
    "{{ 7*7 }} {% raw %}",
    "lorry driver " + "x" * 5000,
]

IN_CI = os.environ.get("CI") == "true"
NONE = DecisionSet()


def demo_config(demo_dir: Path, **overrides: object) -> TrainConfig:
    """The default config with the demo dump's gate pairs, and any `section.key` overrides."""
    values: dict[str, object] = {"gate.pairs": str(demo_dir / "pairs.tsv")}
    values.update(overrides)
    return load_config(None, values)


def train_quietly(corpus: Path, store: Path, config: TrainConfig, force: bool = False) -> TrainOutcome:
    return train(corpus, store, config, force=force, out=io.StringIO())


def write_jsonl(path: Path, rows: Sequence[object]) -> Path:
    with path.open("w", encoding="utf-8") as fh:
        for row in rows:
            fh.write((row if isinstance(row, str) else json.dumps(row)) + "\n")
    return path


@dataclass(frozen=True)
class Opened:
    """A bundle opened as the service opens it: its lexicon, and what is kept of it between queries."""

    lexicon: Lexicon
    cache: ExpansionCache

    @property
    def options(self) -> ExpansionOptions:
        return self.lexicon.options

    def expand(
        self,
        query: str,
        options: ExpansionOptions | None = None,
        decisions: DecisionSet = NONE,
        explain: bool = False,
    ) -> ExpansionResult:
        chosen = options if options is not None else self.lexicon.options
        return expand(self.lexicon, decisions, query, chosen, explain=explain, cache=self.cache)

    def reference(self) -> Opened:
        """The same bundle with nothing kept between calls: what the kept answers are compared with."""
        return Opened(self.lexicon, ExpansionCache(self.lexicon, keep_answers=False))


def open_store(store: Path, version: str | None = None) -> Opened:
    """The current bundle of `store` (or `version`), verified and opened."""
    lexicon = Lexicon(Store(store).open_bundle(version))
    return Opened(lexicon, ExpansionCache(lexicon))


def republish(store: Path, damage: str | None = None) -> str:
    """Publish a copy of the store's first bundle under a new version, as the trainer does (the files
    first, the pointer last; the manifest names the new version). `damage`: flip (one byte of a file),
    truncate (a file cut short), remove (a file missing), manifest (no manifest). Returns the version."""
    s = Store(store)
    version = new_version(s.current_version() or "")
    target = s.bundle_dir(version)
    shutil.copytree(s.bundle_dir(s.versions()[0]), target)  # the first, sound bundle
    manifest = json.loads((target / "manifest.json").read_text(encoding="utf-8"))
    manifest["version"] = version
    (target / "manifest.json").write_text(json.dumps(manifest), encoding="utf-8")
    victim = target / "neighbours_similarity.npy"
    if damage == "flip":
        data = bytearray(victim.read_bytes())
        data[len(data) // 2] ^= 0x01
        victim.write_bytes(bytes(data))
    elif damage == "truncate":
        victim.write_bytes(victim.read_bytes()[: victim.stat().st_size // 2])
    elif damage == "remove":
        victim.unlink()
    elif damage == "manifest":
        (target / "manifest.json").unlink()
    s.set_current(version, by="test")
    return version


def decided() -> DecisionSet:
    """A few decisions of every kind, on phrases of the demo board."""
    at = "2026-12-02T10:00:00Z"
    return DecisionSet.from_decisions(
        1,
        [
            Decision(1, "lorry driver", "hgv driver", "block", None, "ana", None, at),
            Decision(2, "staff nurse", "ward sister", "block", None, "ana", None, at),
            Decision(3, "kitchen porter", "pot wash assistant", "pin", 0.4, "ana", None, at),
            Decision(4, "chef", None, "exempt", None, "ana", None, at),
        ],
    )


def until(done: Callable[[], bool], what: str, seconds: float = 15.0, every: float = 0.02) -> None:
    """Poll `done` until it holds; fail with `what` once `seconds` have passed (a deadline for a test
    that would otherwise hang, never a timing the test asserts)."""
    deadline = time.monotonic() + seconds
    while not done():
        assert time.monotonic() < deadline, what
        time.sleep(every)
