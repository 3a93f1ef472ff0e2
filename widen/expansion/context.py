"""What one span's filters need to know of the whole query around it."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from widen.expansion.lexicon import Lexicon
from widen.expansion.query_text import JOBS
from widen.expansion.segment import Span
from widen.text.forms import PHRASE_JOINER

__all__ = ["QueryContext", "query_contexts"]


@dataclass(frozen=True)
class QueryContext:
    """What one span's filters need to know of the whole query."""

    words: frozenset[str]  # every word of the query's job spans
    head: bool  # a single word next to another job span: the head of a title split in two
    whole: npt.NDArray[np.float32] | None  # the job spans' composed vector, for a head word
    # For a head word, the query's job spans (key and parts), which `words` and `whole` are made of:
    # what its filters read of the query. Empty for any other span, whose filters read none of it.
    jobs: tuple[tuple[str, tuple[str, ...]], ...] = ()


def query_contexts(lex: Lexicon, spans: Sequence[Span]) -> list[QueryContext]:
    """Each span's `QueryContext`; the words of the query's job spans are worked out once."""
    jobs = [p for p in spans if p.kind in JOBS]
    words = frozenset(w for p in jobs for w in p.key.split(PHRASE_JOINER))
    plain = QueryContext(words, False, None)
    if len(jobs) < 2:  # most queries: one job span, so no head word beside another
        return [plain] * len(spans)
    job = [False, *(p.kind in JOBS for p in spans), False]  # job[s + 1]: whether span s is a job's
    out = []
    for s, span in enumerate(spans):
        head = job[s + 1] and PHRASE_JOINER not in span.key and (job[s] or job[s + 2])
        if not head:
            out.append(plain)
            continue
        whole = None
        known = [lex.index[w] for p in jobs for w in ([p.key] if p.key in lex.index else p.parts) if w in lex.index]
        if len(known) > 1:
            mean = np.asarray(lex.normed[known]).mean(axis=0)
            whole = (mean / (np.linalg.norm(mean) or 1.0)).astype(np.float32)
        out.append(QueryContext(words, True, whole, tuple((p.key, p.parts) for p in jobs)))
    return out
