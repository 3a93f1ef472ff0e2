"""`widen train`: from a postings dump to a gated, published bundle, stage by stage (`training.stages`).

The corpus is read and tokenised once, into a scratch file of sentences (`first_pass`); phrase
passes, the phrased corpus and skip-gram all stream from scratch files, so memory follows the
vocabulary and not the number of postings. Nothing reaches bundles/ until the bundle is complete
and fsynced, and CURRENT moves only after the gate passed (or `--force`). Each stage's time is
printed as it ends and recorded in the manifest.
"""

from __future__ import annotations

import logging
import platform
import shutil
import sys
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO

import gensim
import numpy as np

from training import stages
from training.config import TrainConfig
from training.corpus import PostingCorpus
from training.final_pass import final_pass, keep_words
from training.first_pass import Scratch
from training.gate import GateResult, read_pairs
from training.skipgram import fit_skipgram
from widen.clock import new_version, utc_stamp
from widen.decisions.open_store import open_decision_store
from widen.errors import EXIT_OK, EXIT_REFUSED, BadInput, BundleError
from widen.evaluation.runs import read_queries
from widen.expansion.lexicon import Lexicon
from widen.model.bundle import Bundle, BundleWriter, sha256_file
from widen.model.manifest import GateInfo, Manifest
from widen.model.store import Store

__all__ = ["TrainOutcome", "train", "summary"]

log = logging.getLogger("widen.train")


@dataclass
class TrainOutcome:
    version: str
    promoted: bool
    forced: bool
    gate: GateResult
    manifest: Manifest
    seconds: dict[str, float] = field(default_factory=dict)

    @property
    def exit_code(self) -> int:
        return EXIT_OK if self.promoted else EXIT_REFUSED


class _Clock:
    """Times each stage, prints it as it ends, and keeps it for the manifest."""

    def __init__(self, out: IO[str]) -> None:
        self.out = out
        self.seconds: dict[str, float] = {}

    @contextmanager
    def stage(self, name: str) -> Iterator[None]:
        started = time.monotonic()
        yield
        self.seconds[name] = time.monotonic() - started
        print(f"[stage] {name}: {self.seconds[name]:.1f} s", file=self.out, flush=True)


def _serving_lexicon(store: Store) -> Lexicon | None:
    """The serving bundle, verified once for both gate comparisons; None when there is none usable."""
    if store.current_version() is None:
        return None
    try:
        return Lexicon(store.open_bundle())
    except BundleError as exc:
        log.warning("the serving bundle cannot be compared (%s); checking the floors only", exc)
        return None


def _check_inputs(corpus_path: Path, config: TrainConfig) -> None:
    """Everything that can be checked before any work starts."""
    if not corpus_path.is_file():
        raise BadInput(f"corpus not found: {corpus_path}")
    if config.gate.pairs:
        read_pairs(Path(config.gate.pairs))
    if config.gate.queries:
        try:
            read_queries(Path(config.gate.queries))
        except (OSError, ValueError) as exc:
            raise BadInput(f"gate.queries: {exc}") from exc
        if config.gate.postings and not Path(config.gate.postings).is_file():
            raise BadInput(f"gate.postings not found: {config.gate.postings}")


def train(
    corpus_path: Path,
    store_root: Path,
    config: TrainConfig,
    force: bool = False,
    out: IO[str] | None = None,
) -> TrainOutcome:
    """Train one bundle and publish it; returns the outcome (raises BadInput on unusable input)."""
    out = out if out is not None else sys.stderr
    _check_inputs(corpus_path, config)
    store = Store(store_root)
    with store.locked():
        cleared = store.clear_debris()
        if cleared:
            print(f"cleared {len(cleared)} half-written bundle(s) left by an interrupted run", file=out)
        clock = _Clock(out)
        with clock.stage("checksum"):
            corpus_sha = sha256_file(corpus_path)
        version = new_version(corpus_sha + config.model_dump_json())
        work = store.new_work_dir(version)
        try:
            return _run(corpus_path, corpus_sha, version, work, store, config, force, clock)
        except BaseException:
            shutil.rmtree(work, ignore_errors=True)
            raise


def _run(
    corpus_path: Path,
    corpus_sha: str,
    version: str,
    work: Path,
    store: Store,
    config: TrainConfig,
    force: bool,
    clock: _Clock,
) -> TrainOutcome:
    """The stages in order, in the run's work folder; then the gate's verdict is published."""
    out, writer = clock.out, BundleWriter(work)
    scratch_dir = work / "_scratch"
    scratch_dir.mkdir()
    scratch = Scratch(scratch_dir, config.corpus.workers)
    phrased_path, postings = scratch_dir / "phrased.txt", scratch_dir / "postings.txt"
    corpus = PostingCorpus(corpus_path, config.corpus)
    with clock.stage("read, tokenise and phrases"):
        phrased = stages.read_and_phrase(corpus, scratch, config, out)
    with clock.stage("final pass"):
        counts, in_titles = final_pass(
            phrased.phraser, scratch, phrased_path, postings, phrased.first.names_path, config.corpus.workers
        )
        keep_words(phrased_path, counts, config.embedding.min_count)
    with clock.stage("skip-gram"):
        model = fit_skipgram(phrased_path, config, out, config.corpus.workers)
    with clock.stage("titles and duties"):
        duties = stages.titles_and_duties(model, postings, config)
    with clock.stage("save"):
        normed = stages.write_files(writer, model, in_titles, phrased, duties, config)
    with clock.stage("concepts"):
        concepts = stages.learn_concepts(writer, model, normed, postings, phrased, store, version, config, out)
    shutil.rmtree(scratch_dir)  # the scratch corpus is not part of the bundle
    with clock.stage("neighbours"):
        stages.neighbour_table(writer, normed, config, out)
    draft = stages.draft_manifest(
        version, utc_stamp(), corpus_path, corpus_sha, corpus, phrased, model, duties, config, concepts
    )
    with clock.stage("gate"):
        pairs = read_pairs(Path(config.gate.pairs)) if config.gate.pairs else None
        serving = _serving_lexicon(store) if pairs or config.gate.queries else None
        decisions = open_decision_store(store).snapshot() if config.gate.queries else None
        candidate = Lexicon(Bundle(work, manifest=draft))
        gate = stages.judge(candidate, serving, model, pairs, store, decisions, corpus_path, config, out)
    return _publish(store, writer, draft, gate, force, clock, config.store.keep)


def _publish(
    store: Store, writer: BundleWriter, draft: Manifest, gate: GateResult, force: bool, clock: _Clock, keep: int
) -> TrainOutcome:
    """The manifest, the bundle renamed into bundles/, and CURRENT moved when the gate passed (or forced)."""
    promote = gate.passed or force
    forced = bool(force and not gate.passed)
    software = {"gensim": gensim.__version__, "numpy": np.__version__, "python": platform.python_version()}
    seconds = {k: round(v, 3) for k, v in clock.seconds.items()}
    judged = GateInfo.model_validate(dict(gate.as_dict(), forced=forced))
    manifest = writer.finish(draft.model_copy(update={"gate": judged, "software": software, "seconds": seconds}))
    store.publish(writer.folder, draft.version)
    if promote:
        store.set_current(draft.version, by="train", forced=forced)
    store.prune(keep)
    return TrainOutcome(draft.version, promote, forced, gate, manifest, dict(clock.seconds))


def summary(outcome: TrainOutcome) -> str:
    """The end-of-run table for a person or a log."""
    m = outcome.manifest
    c = m.corpus
    assert c is not None  # a bundle widen train made says what it was made from
    skipped = ", ".join(f"{r} {v.count}" for r, v in c.skipped.items()) or "none"
    gate = outcome.gate
    if gate.passed:
        verdict = "passed"
    elif outcome.forced:
        verdict = "REFUSED, promoted anyway (--force): " + "; ".join(gate.reasons)
    else:
        verdict = "REFUSED: " + "; ".join(gate.reasons)
    rows = [
        ("bundle", outcome.version),
        ("postings read", str(c.postings_read)),
        ("postings used", str(c.postings_used)),
        ("skipped", skipped),
        ("duplicates", str(c.duplicates)),
        ("tokens", str(c.tokens)),
        ("phrases", str(m.phrase_count)),
        ("vocabulary", str(m.vocabulary_size)),
        ("gate score", "n/a" if gate.score is None else f"{gate.score:.3f}"),
        ("serving score", "n/a" if gate.current_score is None else f"{gate.current_score:.3f}"),
        ("gate", verdict),
        ("now serving", outcome.version if outcome.promoted else "unchanged"),
    ]
    rows += [(f"seconds: {k}", f"{v:.1f}") for k, v in outcome.seconds.items()]
    width = max(len(k) for k, _ in rows)
    return "\n".join(f"{k.ljust(width)}  {v}" for k, v in rows)
