"""`widen train`: from a postings dump to a gated, published bundle.

The corpus is read and tokenised once, into a scratch file of sentences; phrase passes,
the phrased corpus and Word2Vec (skip-gram with negative sampling, in gensim's
corpus-file mode) all stream from scratch files, so memory follows the vocabulary and
not the number of postings. Nothing reaches bundles/ until the bundle is complete and
fsynced, and CURRENT moves only after the gate passed (or `--force`).
"""

from __future__ import annotations

import hashlib
import json
import logging
import multiprocessing
import platform
import shutil
import sys
import time
from collections import Counter, deque
from collections.abc import Iterator
from dataclasses import dataclass, field
from multiprocessing.pool import AsyncResult
from pathlib import Path
from typing import IO, Any

import gensim
import numpy as np
from gensim.models import Word2Vec
from gensim.models.callbacks import CallbackAny2Vec

from training import bundle as layout
from training.bundle import FORMAT_VERSION, Store, new_version, open_bundle, sha256_file, write_manifest
from training.config import TrainConfig
from training.corpus import Posting, PostingCorpus
from training.gate import GateResult, PairsError, decide, read_pairs, score_pairs
from training.neighbours import normalise_rows, top_k_table
from training.phrases import Phraser, learn_phrases
from training.progress import Progress
from training.tokenize import PHRASE_JOINER, sentences, tokens

__all__ = ["BadInput", "TrainOutcome", "train", "EXIT_OK", "EXIT_FAILURE", "EXIT_BAD_INPUT", "EXIT_REFUSED"]

EXIT_OK, EXIT_FAILURE, EXIT_BAD_INPUT, EXIT_REFUSED = 0, 1, 2, 3
_MAX_PROTECTED = 200_000
log = logging.getLogger("widen.train")


class BadInput(ValueError):
    """The dump (or the config) cannot be trained on; nothing was published."""


@dataclass
class TrainOutcome:
    version: str
    promoted: bool
    forced: bool
    gate: GateResult
    manifest: dict[str, Any]
    seconds: dict[str, float] = field(default_factory=dict)

    @property
    def exit_code(self) -> int:
        return EXIT_OK if self.promoted else EXIT_REFUSED


class _EpochProgress(CallbackAny2Vec):  # type: ignore[misc]
    def __init__(self, progress: Progress) -> None:
        self.progress = progress

    def on_epoch_end(self, model: Word2Vec) -> None:
        self.progress.update(1)


class _Scratch:
    """The corpus as phrased so far, in a scratch file of `T|D<TAB>tokens` lines (T: title).

    `through(phraser)` streams it with one more phrase pass applied and writes that as the
    next scratch file, so the next pass reads it without applying earlier passes again.
    """

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.generation = 0
        self.path = folder / "sentences.0.txt"

    def through(self, phraser: Phraser) -> Iterator[list[str]]:
        source = self.path
        self.generation += 1
        target = self.folder / f"sentences.{self.generation}.txt"
        with source.open(encoding="utf-8") as src, target.open("w", encoding="utf-8") as dst:
            for line in src:
                entries = phraser(line[2:].split())
                dst.write(f"{line[:2]}{' '.join(entries)}\n")
                yield entries
        source.unlink()
        self.path = target


@dataclass(frozen=True)
class _Tokenised:
    """One posting after tokenising: scratch lines ready to write, and what de-duplication needs."""

    line: int
    key: bytes
    tokens: int
    lines: str
    protected: tuple[str, ...]


def _tokenise_batch(batch: list[Posting], has_title: bool) -> list[_Tokenised]:
    """Runs in a worker process; returns plain strings, which cross processes cheaply."""
    out = []
    for posting in batch:
        rows: list[str] = []
        flat: list[str] = []
        for number, text in enumerate(posting.texts):
            mark = "T" if number == 0 and has_title else "D"
            for sent in sentences(text):
                rows.append(f"{mark}\t{' '.join(sent)}\n")
                flat.extend(sent)
        key = hashlib.blake2b("\x1f".join(flat).encode("utf-8"), digest_size=12).digest()
        protected = tuple(j for j in (PHRASE_JOINER.join(tokens(v)) for v in posting.protected) if j)
        out.append(_Tokenised(posting.line, key, len(flat), "".join(rows), protected))
    return out


def _batched(corpus: PostingCorpus, size: int = 256) -> Iterator[list[Posting]]:
    batch: list[Posting] = []
    for posting in corpus:
        batch.append(posting)
        if len(batch) == size:
            yield batch
            batch = []
    if batch:
        yield batch


class _FirstPass:
    """Read, validate, de-duplicate and tokenise every posting once.

    Iterating yields the sentences (for the first phrase pass) and, as a side effect, writes
    them to the scratch file as `T|D<TAB>tokens` lines (T for title). Tokenising runs in
    `workers` processes while the caller (gensim Phrases) counts the batch before.
    """

    def __init__(self, corpus: PostingCorpus, scratch: Path, workers: int, out: IO[str]) -> None:
        self.corpus, self.scratch, self.workers, self.out = corpus, scratch, workers, out
        self.used = self.duplicates = self.tokens = 0
        self.protected: set[str] = set()
        self.has_title = bool(corpus.config.fields) and corpus.config.fields[0] == "title"

    def _tokenised(self) -> Iterator[_Tokenised]:
        if self.workers <= 1:
            for batch in _batched(self.corpus):
                yield from _tokenise_batch(batch, self.has_title)
            return
        # Submit a bounded number of batches ahead (Pool.imap would read the whole dump ahead
        # of a slow consumer and hold it in memory).
        ahead = 2 * self.workers
        with multiprocessing.get_context("fork").Pool(self.workers) as pool:
            pending: deque[AsyncResult[list[_Tokenised]]] = deque()
            for batch in _batched(self.corpus):
                pending.append(pool.apply_async(_tokenise_batch, (batch, self.has_title)))
                if len(pending) >= ahead:
                    yield from pending.popleft().get()
            while pending:
                yield from pending.popleft().get()

    def __iter__(self) -> Iterator[list[str]]:
        seen: set[bytes] = set()
        with (
            Progress("read and tokenise", unit="postings", stream=self.out) as bar,
            self.scratch.open("w", encoding="utf-8") as fh,
        ):
            for done in self._tokenised():
                bar.update()
                if not done.tokens:
                    self.corpus.stats.skip("empty_text", done.line)
                    continue
                if done.key in seen:
                    self.duplicates += 1
                    continue
                seen.add(done.key)
                self.used += 1
                self.tokens += done.tokens
                fh.write(done.lines)
                for row in done.lines.splitlines():
                    yield row[2:].split()
                if len(self.protected) < _MAX_PROTECTED:
                    self.protected.update(done.protected)


def _check_bad_fraction(corpus: PostingCorpus, used: int, config: TrainConfig) -> None:
    stats = corpus.stats
    if stats.read == 0 or used == 0:
        raise BadInput(f"no usable posting in {corpus.path} (read {stats.read}, skipped {stats.skipped})")
    fraction = stats.bad / stats.read
    if fraction > config.corpus.max_bad_fraction:
        reasons = ", ".join(f"{r} {n} (lines {corpus.stats.examples[r]})" for r, n in sorted(stats.skipped.items()))
        raise BadInput(
            f"{stats.bad} of {stats.read} records ({fraction:.1%}) are bad, above "
            f"corpus.max_bad_fraction = {config.corpus.max_bad_fraction:.1%}: {reasons}"
        )


def _final_pass(phraser: Phraser, scratch: _Scratch, phrased: Path) -> Counter[str]:
    """Apply the last phrase pass, write plain token lines for Word2Vec, count entries used in titles."""
    in_titles: Counter[str] = Counter()
    last = Phraser(phraser.passes[-1:]) if scratch.generation < len(phraser.passes) else Phraser([])
    with scratch.path.open(encoding="utf-8") as src, phrased.open("w", encoding="utf-8") as dst:
        for line in src:
            entries = last(line[2:].split())
            if line[0] == "T":
                in_titles.update(entries)
            dst.write(" ".join(entries) + "\n")
    return in_titles


def _word2vec(phrased: Path, config: TrainConfig, out: IO[str]) -> Word2Vec:
    emb = config.embedding
    with Progress("skip-gram epochs", total=emb.epochs, unit="epochs", stream=out, every=0.0) as bar:
        return Word2Vec(
            corpus_file=str(phrased),
            sg=1,
            hs=0,
            negative=emb.negative,
            vector_size=emb.vector_size,
            window=emb.window,
            min_count=emb.min_count,
            sample=emb.sample,
            alpha=emb.alpha,
            epochs=emb.epochs,
            seed=emb.seed,
            workers=emb.workers,
            callbacks=[_EpochProgress(bar)],
        )


def _structure_problems(model: Word2Vec) -> list[str]:
    problems = []
    if len(model.wv) < 2:
        problems.append(f"vocabulary has {len(model.wv)} entries; raise the corpus or lower embedding.min_count")
    elif not np.isfinite(model.wv.vectors).all():
        problems.append("vectors contain NaN or infinity")
    return problems


def _serving_bundle(store: Store) -> layout.Bundle | None:
    """The serving bundle, verified once for both gate comparisons; None when there is none usable."""
    if store.current_version() is None:
        return None
    try:
        return open_bundle(store)
    except layout.BundleError as exc:
        log.warning("the serving bundle cannot be compared (%s); checking the floors only", exc)
        return None


def _current_gate_score(
    current: layout.Bundle | None, pairs: list[Any] | None, config: TrainConfig
) -> dict[str, Any] | None:
    if pairs is None or current is None:
        return None
    return score_pairs(current.index, current.neighbour_index, current.neighbour_similarity, pairs, config.gate)


def _draft_manifest(
    version: str, corpus_path: Path, corpus_sha: str, config: TrainConfig, vocabulary: int, phrases: int
) -> dict[str, Any]:
    """Enough of a manifest for the candidate to open like any bundle before the gate decides."""
    return {
        "format_version": FORMAT_VERSION,
        "version": version,
        "created_at": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
        "corpus": {"path": str(corpus_path), "sha256": corpus_sha},
        "config": config.model_dump(),
        "vocabulary_size": vocabulary,
        "phrase_count": phrases,
    }


def _impact(
    store: Store,
    serving: layout.Bundle | None,
    work: Path,
    draft: dict[str, Any],
    config: TrainConfig,
    corpus_path: Path,
    out: IO[str],
) -> tuple[dict[str, float], dict[str, float] | None]:
    """Expanded recall@100, nDCG@10 and exact-first of the candidate and of the serving bundle."""
    from service.decisions import DecisionStore
    from service.evaluation import evaluate, read_queries
    from service.expansion import ExpansionOptions, Lexicon
    from service.search_index import SearchIndex

    write_manifest(work, draft)  # replaced by the full manifest once the gate has decided
    queries = read_queries(Path(config.gate.queries))
    postings = Path(config.gate.postings) if config.gate.postings else corpus_path
    print(f"[gate] search impact on {len(queries)} labelled queries", file=out, flush=True)
    index = SearchIndex(postings, store.root / "search-index")
    decisions = DecisionStore(store.decisions_path).snapshot()

    def score(lexicon: Lexicon) -> dict[str, float]:
        report = evaluate(lexicon, decisions, index, queries, ExpansionOptions())
        return {k: report["expanded"][k] for k in ("recall@100", "ndcg@10", "exact_first")}

    candidate = score(Lexicon(layout.Bundle(work, verify=False)))
    return candidate, (score(Lexicon(serving)) if serving is not None else None)


def train(
    corpus_path: Path,
    store_root: Path,
    config: TrainConfig,
    force: bool = False,
    out: IO[str] | None = None,
) -> TrainOutcome:
    """Train one bundle and publish it; returns the outcome (raises BadInput on unusable input)."""
    out = out if out is not None else sys.stderr
    seconds: dict[str, float] = {}
    if not corpus_path.is_file():
        raise BadInput(f"corpus not found: {corpus_path}")
    try:
        pairs = read_pairs(Path(config.gate.pairs)) if config.gate.pairs else None
    except PairsError as exc:
        raise BadInput(str(exc)) from exc
    if config.gate.queries:
        from service.evaluation import read_queries

        try:
            read_queries(Path(config.gate.queries))
        except (OSError, ValueError) as exc:
            raise BadInput(f"gate.queries: {exc}") from exc
        if config.gate.postings and not Path(config.gate.postings).is_file():
            raise BadInput(f"gate.postings not found: {config.gate.postings}")
    store = Store(store_root)
    with store.locked():
        cleared = store.clear_debris()
        if cleared:
            print(f"cleared {len(cleared)} half-written bundle(s) left by an interrupted run", file=out)
        started = time.monotonic()
        corpus_sha = sha256_file(corpus_path)
        version = new_version(corpus_sha + config.model_dump_json())
        work = store.new_work_dir(version)
        try:
            scratch_dir = work / "_scratch"
            scratch_dir.mkdir()
            scratch, phrased = _Scratch(scratch_dir), scratch_dir / "phrased.txt"
            seconds["checksum"] = time.monotonic() - started

            corpus = PostingCorpus(corpus_path, config.corpus)
            t = time.monotonic()
            first = _FirstPass(corpus, scratch.path, config.corpus.workers, out)
            with Progress(
                "phrase passes", total=max(config.phrases.max_words - 1, 0), unit="passes", stream=out, every=0
            ) as bar:
                phraser, table = learn_phrases(first, scratch.through, config.phrases, lambda n: bar.update())
                _check_bad_fraction(corpus, first.used, config)
                in_titles = _final_pass(phraser, scratch, phrased)
            seconds["read, tokenise and phrases"] = time.monotonic() - t

            t = time.monotonic()
            model = _word2vec(phrased, config, out)
            seconds["skip-gram"] = time.monotonic() - t
            shutil.rmtree(scratch_dir)  # the scratch corpus is not part of the bundle

            t = time.monotonic()
            wv = model.wv
            wv.save(str(work / layout.VECTORS), separately=["vectors"])
            np.save(work / layout.OUTPUT_VECTORS, np.asarray(model.syn1neg, dtype=np.float32))
            counts = np.array(
                [[wv.get_vecattr(k, "count"), in_titles.get(k, 0)] for k in wv.index_to_key], dtype=np.int64
            )
            np.save(work / layout.ENTRY_STATS, counts.reshape(-1, 2))
            (work / layout.PHRASES).write_text(json.dumps(phraser.to_json()) + "\n", encoding="utf-8")
            with (work / layout.PHRASE_TABLE).open("w", encoding="utf-8") as fh:
                fh.write("phrase\tscore\tcount\tpass\n")
                for row in sorted(table, key=lambda r: (-r.count, r.phrase)):
                    fh.write(
                        f"{row.phrase.replace(PHRASE_JOINER, ' ')}\t{row.score:.6f}\t{row.count}\t{row.pass_number}\n"
                    )
            protected = sorted(first.protected)
            (work / layout.PROTECTED).write_text(
                json.dumps({"fields": config.corpus.protected_fields, "entries": protected}) + "\n", encoding="utf-8"
            )
            seconds["save"] = time.monotonic() - t

            t = time.monotonic()
            normed = normalise_rows(wv.vectors)
            np.save(work / layout.NORMED_VECTORS, normed)
            with Progress("neighbour table", total=len(wv), unit="entries", stream=out) as bar:
                nbr_idx, nbr_sim = top_k_table(
                    normed, config.neighbours.top_k, config.neighbours.block_rows, bar.update
                )
            np.save(work / layout.NEIGHBOURS_INDEX, nbr_idx)
            np.save(work / layout.NEIGHBOURS_SIMILARITY, nbr_sim)
            seconds["neighbours"] = time.monotonic() - t

            t = time.monotonic()
            candidate_score = score_pairs(wv.key_to_index, nbr_idx, nbr_sim, pairs, config.gate) if pairs else None
            serving = _serving_bundle(store) if pairs or config.gate.queries else None
            current_score = _current_gate_score(serving, pairs, config)
            impact = current_impact = None
            problems = _structure_problems(model)
            if config.gate.queries and not problems:
                draft = _draft_manifest(version, corpus_path, corpus_sha, config, len(wv), len(table))
                impact, current_impact = _impact(store, serving, work, draft, config, corpus_path, out)
            gate = decide(candidate_score, current_score, config.gate, problems, impact, current_impact)
            seconds["gate"] = time.monotonic() - t

            promote = gate.passed or force
            manifest = {
                "format_version": FORMAT_VERSION,
                "version": version,
                "created_at": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
                "corpus": {
                    "path": str(corpus_path),
                    "sha256": corpus_sha,
                    "format": corpus.format,
                    "postings_read": corpus.stats.read,
                    "postings_used": first.used,
                    "skipped": corpus.stats.as_dict()["skipped"],
                    "duplicates": first.duplicates,
                    "tokens": first.tokens,
                },
                "config": config.model_dump(),
                "vocabulary_size": len(wv),
                "phrase_count": len(table),
                "protected_count": len(protected),
                "gate": dict(gate.as_dict(), forced=bool(force and not gate.passed)),
                "software": {
                    "gensim": gensim.__version__,
                    "numpy": np.__version__,
                    "python": platform.python_version(),
                },
                "seconds": {k: round(v, 3) for k, v in seconds.items()},
            }
            manifest = write_manifest(work, manifest)
            store.publish(work, version)
            if promote:
                store.set_current(version, by="train", forced=bool(force and not gate.passed))
            store.prune(config.store.keep)
        except BaseException:
            shutil.rmtree(work, ignore_errors=True)
            raise
    return TrainOutcome(version, promote, bool(force and not gate.passed), gate, manifest, seconds)


def summary(outcome: TrainOutcome) -> str:
    """The end-of-run table for a person or a log."""
    m = outcome.manifest
    c = m["corpus"]
    skipped = ", ".join(f"{r} {v['count']}" for r, v in c["skipped"].items()) or "none"
    gate = outcome.gate
    if gate.passed:
        verdict = "passed"
    elif outcome.forced:
        verdict = "REFUSED, promoted anyway (--force): " + "; ".join(gate.reasons)
    else:
        verdict = "REFUSED: " + "; ".join(gate.reasons)
    rows = [
        ("bundle", outcome.version),
        ("postings read", str(c["postings_read"])),
        ("postings used", str(c["postings_used"])),
        ("skipped", skipped),
        ("duplicates", str(c["duplicates"])),
        ("tokens", str(c["tokens"])),
        ("phrases", str(m["phrase_count"])),
        ("vocabulary", str(m["vocabulary_size"])),
        ("gate score", "n/a" if gate.score is None else f"{gate.score:.3f}"),
        ("serving score", "n/a" if gate.current_score is None else f"{gate.current_score:.3f}"),
        ("gate", verdict),
        ("now serving", outcome.version if outcome.promoted else "unchanged"),
    ]
    rows += [(f"seconds: {k}", f"{v:.1f}") for k, v in outcome.seconds.items()]
    width = max(len(k) for k, _ in rows)
    return "\n".join(f"{k.ljust(width)}  {v}" for k, v in rows)
