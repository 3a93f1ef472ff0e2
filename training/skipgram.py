"""Skip-gram with negative sampling (Mikolov et al. 2013), gensim's Word2Vec in corpus-file mode.

Corpus-file mode streams the phrased scratch corpus from disk, so memory follows the vocabulary;
both the input vectors and the output vectors (syn1neg) are kept, for the relation hint. The words are
counted in runs by worker processes (`training.counting`) instead of by gensim's own scan, one core
reading the whole file once more: the same counts in the same order, so the same model.
"""

from __future__ import annotations

from pathlib import Path
from typing import IO

import numpy as np
from gensim.models import Word2Vec
from gensim.models.callbacks import CallbackAny2Vec

from training.config import TrainConfig
from training.counting import count_file, word_counts
from training.progress import Progress

__all__ = ["fit_skipgram", "structure_problems"]


class _EpochProgress(CallbackAny2Vec):  # type: ignore[misc]
    def __init__(self, progress: Progress) -> None:
        self.progress = progress

    def on_epoch_end(self, model: Word2Vec) -> None:
        self.progress.update(1)


def fit_skipgram(phrased: Path, config: TrainConfig, out: IO[str], workers: int = 1) -> Word2Vec:
    """Train on a file of space-separated entries, one sentence a line; its words counted by `workers`
    processes."""
    emb = config.embedding
    with Progress("skip-gram epochs", total=emb.epochs, unit="epochs", stream=out, every=0.0) as bar:
        callbacks = [_EpochProgress(bar)]
        model = Word2Vec(
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
            callbacks=callbacks,
        )
        counted = count_file(phrased, word_counts, workers)
        # What Word2Vec(corpus_file=...) does after its own scan of the file (gensim 4: build_vocab, train).
        model.corpus_count, model.corpus_total_words, model.raw_vocab = counted.sentences, counted.words, counted.vocab
        model.prepare_vocab()
        model.prepare_weights()
        model.train(
            corpus_file=str(phrased),
            total_examples=model.corpus_count,
            total_words=model.corpus_total_words,
            epochs=model.epochs,
            start_alpha=model.alpha,
            end_alpha=model.min_alpha,
            compute_loss=model.compute_loss,
            callbacks=callbacks,
        )
        return model


def structure_problems(model: Word2Vec) -> list[str]:
    """What makes a model unusable whatever the gate's pairs say."""
    problems = []
    if len(model.wv) < 2:
        problems.append(f"vocabulary has {len(model.wv)} entries; raise the corpus or lower embedding.min_count")
    elif not np.isfinite(model.wv.vectors).all():
        problems.append("vectors contain NaN or infinity")
    return problems
