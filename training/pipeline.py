"""`widen train`: from a postings dump to a gated, published bundle.

The corpus is read and tokenised once, into a scratch file of sentences (`first_pass`); phrase
passes, the phrased corpus and skip-gram all stream from scratch files, so memory follows the
vocabulary and not the number of postings. Nothing reaches bundles/ until the bundle is complete
and fsynced, and CURRENT moves only after the gate passed (or `--force`).
"""

from __future__ import annotations

import logging
import platform
import shutil
import sys
import time
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

import gensim
import numpy as np

from training.config import TrainConfig
from training.corpus import PostingCorpus
from training.duties import duty_table
from training.first_pass import FirstPass, Scratch
from training.gate import GateResult, Tables, decide, read_pairs, score_pairs, search_impact
from training.phrases import learn_phrases, phrase_filter
from training.progress import Progress
from training.skipgram import fit_skipgram, structure_problems
from training.titles import is_short_number
from widen.bundle import Bundle, BundleWriter, sha256_file
from widen.clock import new_version, utc_stamp
from widen.decision_stores import open_decision_store
from widen.errors import EXIT_OK, EXIT_REFUSED, BadInput, BundleError
from widen.evaluation.runs import read_queries
from widen.neighbours import normalise_rows, top_k_table
from widen.phrases import Phraser
from widen.store import Store
from widen.text import PHRASE_JOINER, in_windows, is_number

__all__ = ["TrainOutcome", "train", "summary"]

log = logging.getLogger("widen.train")


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


def _final_pass(phraser: Phraser, scratch: Scratch, phrased: Path, postings: Path) -> tuple[Counter[str], Counter[str]]:
    """Apply the last phrase pass and the title pass; write one line a block for skip-gram, whose
    windows then span the sentences of a paragraph or list item (numbers and lone letters left out),
    and one line a posting of its title entries and description entries, for the duties. Returns the
    count of every entry written for skip-gram, and of the entries used in titles."""
    counts: Counter[str] = Counter()
    in_titles: Counter[str] = Counter()
    passes = phraser.passes[-1:] if scratch.generation < len(phraser.passes) else []
    last = Phraser(passes, phraser.titles)
    block: list[str] = []
    title: list[str] = []
    said: list[str] = []

    def posting_done() -> None:
        if title or said:
            out.write(" ".join(title) + "\t" + " ".join(said) + "\n")
        title.clear()
        said.clear()

    with (
        scratch.path.open(encoding="utf-8") as src,
        phrased.open("w", encoding="utf-8") as dst,
        postings.open("w", encoding="utf-8") as out,
    ):
        for line in src:
            entries = last(line[2:].split())
            if line[0] in "TDP" and block:  # a new block starts: the one before is complete
                dst.write(" ".join(block) + "\n")
                block = []
            if line[0] == "P":
                posting_done()
                continue
            kept = [e for e in entries if in_windows(e)]
            if line[0] in "Tt":
                in_titles.update(entries)
                title.extend(kept)
            else:
                said.extend(kept)
            counts.update(kept)
            block.extend(kept)
        if block:
            dst.write(" ".join(block) + "\n")
        posting_done()
    return counts, in_titles


def _keep_words(phrased: Path, counts: Counter[str], min_count: int) -> int:
    """Give back to single words the occurrences phrases took, where a word would otherwise go without
    a vector: a word seen fewer than `min_count` times on its own, but at least that often counting
    the phrases it is in ("asylum" inside "asylum seekers"), gets phrase occurrences split back into
    words until it reaches `min_count`; a phrase is never split below `min_count` itself. Returns
    how many phrase occurrences were split."""
    inside: Counter[str] = Counter()
    for entry, n in counts.items():
        if PHRASE_JOINER in entry:
            for word in set(entry.split(PHRASE_JOINER)):
                if in_windows(word):
                    inside[word] += n
    need = {w: min_count - counts[w] for w, n in inside.items() if counts[w] < min_count <= counts[w] + n}
    if not need:
        return 0
    spare = {e: n - min_count for e, n in counts.items() if PHRASE_JOINER in e and n > min_count}
    split = 0
    rewritten = phrased.with_suffix(".words.txt")
    with phrased.open(encoding="utf-8") as src, rewritten.open("w", encoding="utf-8") as dst:
        for line in src:
            out: list[str] = []
            for entry in line.split():
                words = entry.split(PHRASE_JOINER) if PHRASE_JOINER in entry else ()
                if words and spare.get(entry, 0) > 0 and any(need.get(w, 0) > 0 for w in words):
                    spare[entry] -= 1
                    split += 1
                    for word in words:
                        if word in need:
                            need[word] -= 1
                    out.extend(w for w in words if in_windows(w))
                else:
                    out.append(entry)
            dst.write(" ".join(out) + "\n")
    rewritten.replace(phrased)
    return split


def _fragments(in_titles: Counter[str], share: float = 0.2) -> set[str]:
    """Title entries that are mostly a piece of longer titles ("pot" of "pot washer", "nurse" of "staff
    nurse"): seen alone in fewer titles than `share` of the titles that hold them inside a longer one.
    Alone, such a piece is a typo's leftover or a shorthand, not a title with duties of its own."""
    spans: Counter[str] = Counter()
    for entry, n in in_titles.items():
        words = entry.split(PHRASE_JOINER)
        for size in range(1, len(words)):
            for i in range(len(words) - size + 1):
                spans[PHRASE_JOINER.join(words[i : i + size])] += n
    return {e for e, inside in spans.items() if e in in_titles and in_titles[e] < share * inside}


def _serving_bundle(store: Store) -> Bundle | None:
    """The serving bundle, verified once for both gate comparisons; None when there is none usable."""
    if store.current_version() is None:
        return None
    try:
        return store.open_bundle()
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
    seconds: dict[str, float] = {}
    _check_inputs(corpus_path, config)
    pairs = read_pairs(Path(config.gate.pairs)) if config.gate.pairs else None
    store = Store(store_root)
    with store.locked():
        cleared = store.clear_debris()
        if cleared:
            print(f"cleared {len(cleared)} half-written bundle(s) left by an interrupted run", file=out)
        started = time.monotonic()
        corpus_sha = sha256_file(corpus_path)
        version = new_version(corpus_sha + config.model_dump_json())
        work = store.new_work_dir(version)
        writer = BundleWriter(work)
        try:
            scratch_dir = work / "_scratch"
            scratch_dir.mkdir()
            scratch, phrased = Scratch(scratch_dir), scratch_dir / "phrased.txt"
            seconds["checksum"] = time.monotonic() - started

            corpus = PostingCorpus(corpus_path, config.corpus)
            t = time.monotonic()
            apart = config.expansion.not_inside_phrases()
            # A title core leaves out what decorates a title: patterns, noise words, and modifiers too
            # ("trainee staff nurse" names a staff nurse; mining still forms "senior carer" on its own).
            decoration = apart | frozenset(config.expansion.modifiers)
            first = FirstPass(
                corpus, scratch.path, config.corpus.workers, out, decoration, config.phrases.title_max_words
            )
            keep = phrase_filter(lambda: first.protected.keys(), apart)
            passes = max(config.phrases.max_words - 1, 0)
            with Progress("phrase passes", total=passes, unit="passes", stream=out, every=0) as bar:
                mined, table = learn_phrases(first, scratch.through, config.phrases, lambda n: bar.update(), keep)
                _check_bad_fraction(corpus, first.used, config)
                titles = {c for c, n in first.cores.items() if n >= config.phrases.title_min_count and keep(c)}
                phraser = Phraser(mined.passes, titles)
                counts, in_titles = _final_pass(phraser, scratch, phrased, scratch_dir / "postings.txt")
                _keep_words(phrased, counts, config.embedding.min_count)
            seconds["read, tokenise and phrases"] = time.monotonic() - t

            t = time.monotonic()
            model = fit_skipgram(phrased, config, out)
            seconds["skip-gram"] = time.monotonic() - t

            t = time.monotonic()
            protected = first.protected

            fragments = _fragments(in_titles)

            modifiers = frozenset(config.expansion.modifiers)

            def is_title(entry: str) -> bool:
                words = entry.split(PHRASE_JOINER)
                lead = next((n for n, w in enumerate(words) if w not in modifiers), len(words))
                rest = PHRASE_JOINER.join(words[lead:])
                return (
                    entry not in protected
                    and entry not in fragments
                    and not all(w in decoration for w in words)
                    and not is_number(words[0])
                    and not is_number(words[-1])
                    and all(not is_number(w) or is_short_number(w) for w in words)
                    # a modifier glued to a piece of a title ("trainee_dental") is no title; glued
                    # to a whole one ("senior_carer") it is
                    and (lead == 0 or (rest in in_titles and rest not in fragments))
                )

            duties = duty_table(scratch_dir / "postings.txt", model.wv.key_to_index, is_title, config.duties)
            seconds["duties"] = time.monotonic() - t
            shutil.rmtree(scratch_dir)  # the scratch corpus is not part of the bundle

            t = time.monotonic()
            wv = model.wv
            normed = normalise_rows(wv.vectors)
            writer.vectors(wv, model.syn1neg, normed)
            writer.entry_stats([[wv.get_vecattr(k, "count"), in_titles.get(k, 0)] for k in wv.index_to_key])
            writer.phrases(phraser, table)
            writer.protected(config.corpus.protected_fields, first.protected)
            writer.duties(duties.rows, duties.index, duties.similarity)
            seconds["save"] = time.monotonic() - t

            t = time.monotonic()
            with Progress("neighbour table", total=len(wv), unit="entries", stream=out) as bar:
                nbr_idx, nbr_sim = top_k_table(
                    normed, config.neighbours.top_k, config.neighbours.block_rows, bar.update
                )
            writer.neighbours(nbr_idx, nbr_sim)
            seconds["neighbours"] = time.monotonic() - t

            t = time.monotonic()
            fields: dict[str, Any] = {
                "version": version,
                "created_at": utc_stamp(),
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
                "title_phrases": len(titles),
                "protected_count": len(first.protected),
                "duties": duties.stats,
            }
            split = duties.stats.get("split_half")
            candidate_tables = Tables(
                wv.key_to_index,
                nbr_idx,
                nbr_sim,
                duties.rows,
                duties.index,
                duties.similarity,
                config.expansion.equivalent_duties * split if split else None,
            )
            candidate_score = score_pairs(candidate_tables, pairs, config.gate) if pairs else None
            serving = _serving_bundle(store) if pairs or config.gate.queries else None
            current_score = (
                score_pairs(Tables.of(serving), pairs, config.gate)
                if pairs is not None and serving is not None
                else None
            )
            impact = current_impact = None
            problems = structure_problems(model)
            if config.gate.queries and not problems:
                impact, current_impact = search_impact(
                    Bundle(work, manifest=writer.draft(fields)),
                    serving,
                    open_decision_store(store).snapshot(),
                    Path(config.gate.queries),
                    Path(config.gate.postings) if config.gate.postings else corpus_path,
                    store.search_indexes,
                    out,
                )
            gate = decide(candidate_score, current_score, config.gate, problems, impact, current_impact)
            seconds["gate"] = time.monotonic() - t

            promote = gate.passed or force
            forced = bool(force and not gate.passed)
            fields["gate"] = dict(gate.as_dict(), forced=forced)
            fields["software"] = {
                "gensim": gensim.__version__,
                "numpy": np.__version__,
                "python": platform.python_version(),
            }
            fields["seconds"] = {k: round(v, 3) for k, v in seconds.items()}
            manifest = writer.finish(fields)
            store.publish(work, version)
            if promote:
                store.set_current(version, by="train", forced=forced)
            store.prune(config.store.keep)
        except BaseException:
            shutil.rmtree(work, ignore_errors=True)
            raise
    return TrainOutcome(version, promote, forced, gate, manifest, seconds)


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
