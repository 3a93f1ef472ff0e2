"""Ranking metrics with trec_eval's definitions (relevant = grade >= 1; nDCG with the grade as gain
and a log2 discount; ranks by score, ties by document id descending). The tests check them against
trec_eval itself (pytrec-eval-terrier) on the same run files."""

from __future__ import annotations

import math
from collections.abc import Sequence

__all__ = ["trec_order", "recall_at", "ndcg_at", "reciprocal_rank"]


def trec_order(run: dict[str, float]) -> list[str]:
    """Documents as trec_eval ranks them: score descending, ties by document id descending."""
    return sorted(run, key=lambda d: (run[d], d), reverse=True)


def recall_at(ranked: Sequence[str], relevant: dict[str, int], k: int) -> float:
    wanted = {d for d, g in relevant.items() if g >= 1}
    return len(wanted & set(ranked[:k])) / len(wanted) if wanted else 0.0


def ndcg_at(ranked: Sequence[str], relevant: dict[str, int], k: int) -> float:
    gains = sorted((g for g in relevant.values() if g > 0), reverse=True)[:k]
    ideal = sum(g / math.log2(i + 2) for i, g in enumerate(gains))
    got = sum(relevant.get(d, 0) / math.log2(i + 2) for i, d in enumerate(ranked[:k]))
    return got / ideal if ideal else 0.0


def reciprocal_rank(ranked: Sequence[str], relevant: dict[str, int]) -> float:
    for i, d in enumerate(ranked):
        if relevant.get(d, 0) >= 1:
            return 1.0 / (i + 1)
    return 0.0
