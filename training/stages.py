"""The stages of `widen train`, each a plain function from what the stages before made to what it makes.

`training.pipeline.train` calls them in order and times each:

1. `read_and_phrase`: read, de-duplicate and tokenise the dump once into a scratch corpus, learn the
   phrase passes from counts made in runs (`training.counting`), pick the title entries;
2. `final_pass` (`training.final_pass`): apply the passes, write the skip-gram and duties files;
3. `fit_skipgram` (`training.skipgram`): skip-gram over the phrased corpus;
4. `titles_and_duties`: which entries are titles, and their duties profiles;
5. `write_files`: vectors, counts, phrases, protected names and duties into the bundle folder;
   `learn_concepts` (`training.concepts`): k-means clusters of what postings say;
6. `neighbour_table`: the exact top-k table;
7. `judge`: the gate, on the bundle as the service will open it;
8. `publish` (`training.pipeline`): the manifest, the rename into bundles/, CURRENT.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from typing import IO

import numpy as np
import numpy.typing as npt
from gensim.models import Word2Vec

from training.concepts import Previous, fit_concepts
from training.config import TrainConfig
from training.corpus import PostingCorpus
from training.duties import TitleTable, title_table
from training.first_pass import FirstPass, Scratch
from training.gate import GateResult, Pair, decide, score_pairs, search_impact
from training.phrases import ScratchPass, learn_phrases, phrase_filter
from training.progress import Progress
from training.skipgram import structure_problems
from widen.decisions.decision import DecisionSet
from widen.errors import BadInput, BundleError
from widen.expansion.lexicon import Lexicon
from widen.model.bundle import BundleWriter
from widen.model.concepts import Matrix, PostingVectors
from widen.model.manifest import Manifest
from widen.model.neighbours import normalise_rows, top_k_table
from widen.model.phrases import Phraser, PhraseRow
from widen.model.store import Store

__all__ = [
    "Phrased",
    "read_and_phrase",
    "titles_and_duties",
    "write_files",
    "learn_concepts",
    "neighbour_table",
    "judge",
]


@dataclass(frozen=True)
class Phrased:
    """What reading and phrasing made: the passes and their table, the first pass's counts, the titles."""

    first: FirstPass
    phraser: Phraser
    table: list[PhraseRow]
    titles: set[str]


def check_bad_fraction(corpus: PostingCorpus, used: int, config: TrainConfig) -> None:
    """Stop the run (exit code 2) when too many records are bad, or none is usable."""
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


def read_and_phrase(corpus: PostingCorpus, scratch: Scratch, config: TrainConfig, out: IO[str]) -> Phrased:
    """Read and tokenise once (tokenising in worker processes) into a scratch corpus, learn the phrase passes
    over it (each pass counted in runs by worker processes), and keep the title cores named often enough."""
    apart = config.expansion.not_inside_phrases()
    # A title core leaves out what decorates a title: patterns, noise words, and modifiers too
    # ("trainee staff nurse" names a staff nurse; mining still forms "senior carer" on its own).
    decoration = apart | frozenset(config.expansion.modifiers)
    first = FirstPass(
        corpus,
        scratch.path,
        config.corpus.workers,
        out,
        decoration,
        config.phrases.title_max_words,
        config.duties.title_max_words,
    )
    keep = phrase_filter(lambda: first.protected.keys(), apart)
    passes = max(config.phrases.max_words - 1, 0)
    with Progress("phrase passes", total=passes, unit="passes", stream=out, every=0) as bar:
        workers = config.corpus.workers
        mined, table = learn_phrases(
            ScratchPass(first.write, workers),
            lambda newest: ScratchPass(lambda: scratch.apply(newest), workers),
            config.phrases,
            lambda n: bar.update(),
            keep,
        )
    check_bad_fraction(corpus, first.used, config)
    titles = {c for c, n in first.cores.items() if n >= config.phrases.title_min_count and keep(c)}
    return Phrased(first, Phraser(mined.passes, titles), table, titles)


def titles_and_duties(model: Word2Vec, postings: Path, config: TrainConfig) -> TitleTable:
    """Every title the postings name with its duties profile, its titles with alike duties, and how
    alike one job's profiles are at each size in this dump (`training.duties`)."""
    related = config.expansion.related_duties
    return title_table(
        postings,
        model.wv.key_to_index,
        config.duties,
        related,
        seed=config.embedding.seed,
        workers=config.corpus.workers,
    )


def write_files(
    writer: BundleWriter,
    model: Word2Vec,
    in_titles: Counter[str],
    phrased: Phrased,
    duties: TitleTable,
    config: TrainConfig,
) -> npt.NDArray[np.float32]:
    """Every file of the bundle but the neighbour table and the manifest; returns the unit vectors."""
    wv = model.wv
    normed = normalise_rows(wv.vectors)
    writer.vectors(wv, model.syn1neg, normed)
    writer.entry_stats([[wv.get_vecattr(k, "count"), in_titles.get(k, 0)] for k in wv.index_to_key])
    writer.phrases(phrased.phraser, phrased.table)
    writer.protected(config.corpus.protected_fields, phrased.first.protected)
    writer.titles(duties.keys, duties.counts, duties.index, duties.similarity)
    return normed


def _previous(store: Store) -> Previous | None:
    """The serving bundle's concepts, to carry over; None when it has none or cannot be opened."""
    version = store.current_version()
    if version is None:
        return None
    try:
        bundle = store.open_bundle(version)
    except BundleError:
        return None
    if bundle.concepts is None:
        return None
    return Previous(version, bundle.concepts, np.asarray(bundle.normed_vectors), bundle.keys)


def learn_concepts(
    writer: BundleWriter, model: Word2Vec, normed: npt.NDArray[np.float32], postings: Path, phrased: Phrased,
    store: Store, version: str, config: TrainConfig, out: IO[str],
) -> dict[str, object]:  # fmt: skip
    """Concepts of what postings say, carried over from the serving bundle where they can be."""
    settings = config.concepts
    if not settings.enabled:
        return {}
    wv = model.wv
    counts = np.asarray([wv.get_vecattr(k, "count") for k in wv.index_to_key], dtype=np.float64)
    leave_out = frozenset(phrased.first.protected)

    def recipe(common: Matrix | None) -> PostingVectors:
        return PostingVectors(
            normed, wv.key_to_index, counts, phrased.phraser, leave_out, settings.title_weight, settings.sif_a, common
        )

    used = phrased.first.used
    with Progress("concepts", total=min(used, settings.sample), unit="postings", stream=out) as bar:
        concepts, stats = fit_concepts(
            postings, used, recipe, list(wv.index_to_key), counts, settings, version,
            config.embedding.seed, _previous(store), bar.update,
        )  # fmt: skip
    writer.concepts(concepts)
    return stats


def neighbour_table(writer: BundleWriter, normed: npt.NDArray[np.float32], config: TrainConfig, out: IO[str]) -> None:
    """The exact top-k cosine table of every entry (`widen.model.neighbours.top_k_table`)."""
    with Progress("neighbour table", total=len(normed), unit="entries", stream=out) as bar:
        index, similarity = top_k_table(normed, config.neighbours.top_k, config.neighbours.block_rows, bar.update)
    writer.neighbours(index, similarity)


def _lineage_problem(candidate: Lexicon, store: Store, config: TrainConfig) -> list[str]:
    """With concept clauses on, a bundle whose concepts are not the serving bundle's lineage would send
    tokens the index does not hold: refused until the index is tagged with it."""
    current = store.current_version()
    if not config.expansion.concepts or current is None:
        return []
    before = store.manifest(current).concepts.get("lineage")
    now = candidate.concepts.lineage if candidate.concepts is not None else None
    if not before or now == before:
        return []
    return [
        f"concept clauses are on (expansion.concepts) and this bundle's concepts are a new lineage ({now}; the "
        f"index holds lineage {before}): tag the postings with this bundle (widen tag --bundle {candidate.version}), "
        f"then promote it (widen promote {candidate.version} --force)"
    ]


def judge(
    candidate: Lexicon,
    serving: Lexicon | None,
    model: Word2Vec,
    pairs: list[Pair] | None,
    store: Store,
    decisions: DecisionSet | None,
    corpus_path: Path,
    config: TrainConfig,
    out: IO[str],
) -> GateResult:
    """The gate: the structure, the pairs against their floor and against the serving bundle, and with
    `gate.queries` the search impact, each bundle opened as the service opens it."""
    candidate_score = score_pairs(candidate, pairs, config.gate) if pairs else None
    current_score = score_pairs(serving, pairs, config.gate) if pairs is not None and serving is not None else None
    impact = current_impact = None
    problems = structure_problems(model) + _lineage_problem(candidate, store, config)
    if config.gate.queries and not problems:
        impact, current_impact = search_impact(
            candidate,
            serving,
            decisions or DecisionSet(),
            Path(config.gate.queries),
            Path(config.gate.postings) if config.gate.postings else corpus_path,
            store.search_indexes,
            out,
        )
    return decide(candidate_score, current_score, config.gate, problems, impact, current_impact)


def draft_manifest(
    version: str, created_at: str, corpus_path: Path, corpus_sha: str, corpus: PostingCorpus, phrased: Phrased,
    model: Word2Vec, duties: TitleTable, config: TrainConfig, concepts: dict[str, object],
) -> Manifest:  # fmt: skip
    """The manifest as far as it is known before the gate: what the bundle holds and how it was made."""
    first = phrased.first
    return Manifest.model_validate(
        {
            "format_version": 1,
            "version": version,
            "created_at": created_at,
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
            "vocabulary_size": len(model.wv),
            "phrase_count": len(phrased.table),
            "title_phrases": len(phrased.titles),
            "protected_count": len(first.protected),
            "duties": duties.stats,
            "concepts": concepts,
        }
    )
