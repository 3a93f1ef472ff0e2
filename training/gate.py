"""The promotion gate: is a candidate model at least as good as the one serving now?

A pairs file lists phrase pairs a reviewer knows: `near` pairs (another name for the
same job) should be each other's learned neighbours (in the skip-gram top k above a similarity
floor, or titles posted with duties alike enough to be the same job); `far` pairs (different jobs,
including the polysemy traps) should not. The score is the share of
pair checks that hold. A candidate is refused when it scores below an absolute floor
or more than a tolerance below the serving bundle on the same pairs.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any

import numpy as np

from training.config import GateSection
from widen.decisions.decision import DecisionSet
from widen.errors import PairsError
from widen.evaluation.index import SearchIndex
from widen.evaluation.runs import evaluate, read_queries
from widen.expansion.cache import ExpansionCache
from widen.expansion.lexicon import Lexicon
from widen.text.forms import key_of_text

__all__ = ["Pair", "read_pairs", "score_pairs", "search_impact", "GateResult", "decide"]


@dataclass(frozen=True)
class Pair:
    a: str
    b: str
    near: bool


def read_pairs(path: Path) -> list[Pair]:
    """Read `phrase_a<TAB>phrase_b<TAB>near|far` rows after a header row."""
    try:
        with path.open(encoding="utf-8", newline="") as fh:
            rows = list(csv.reader(fh, delimiter="\t"))
    except FileNotFoundError as exc:
        raise PairsError(f"gate pairs file not found: {path}") from exc
    except UnicodeDecodeError as exc:
        raise PairsError(f"gate pairs file is not UTF-8: {path}") from exc
    pairs = []
    for number, row in enumerate(rows[1:], start=2):
        if not row or not "".join(row).strip():
            continue
        if len(row) != 3 or row[2].strip() not in {"near", "far"}:
            raise PairsError(f"{path}:{number}: expected phrase_a<TAB>phrase_b<TAB>near|far, got {row!r}")
        pairs.append(Pair(row[0].strip(), row[1].strip(), row[2].strip() == "near"))
    if not pairs:
        raise PairsError(f"gate pairs file has no pairs: {path}")
    return pairs


def _learned(lex: Lexicon, cache: ExpansionCache, a: str, b: str, top_k: int, floor: float) -> bool:
    """b is among a's learned neighbours: in a's skip-gram top k above the floor, or a title posted with
    duties alike enough to count as the same job (the served `equivalent_duties` of the bundle's own
    split-half cosine). The pairs judge what the model learned, not what the service's filters keep of
    it, because the filters' options change without a retrain; `gate.queries` judges what is served."""
    ia, ib = lex.index.get(key_of_text(a)), lex.index.get(key_of_text(b))
    if ia is None or ib is None:
        return False
    row = lex.bundle.neighbour_index[ia, :top_k]
    hits = np.nonzero(row == ib)[0]
    if hits.size and float(lex.bundle.neighbour_similarity[ia, hits[0]]) >= floor:
        return True
    if lex.split_half is None:
        return False
    ka, kb = lex.keys[ia], lex.keys[ib]
    similarity = cache.duty_neighbours(ka).get(kb)
    same = lex.same_job(lex.postings_of(ka), lex.postings_of(kb))
    return similarity is not None and similarity >= lex.options.equivalent_duties * same


def score_pairs(lex: Lexicon, pairs: list[Pair], config: GateSection) -> dict[str, Any]:
    """Score a bundle's learned neighbours on the pairs; each pair is checked in both directions."""
    cache = ExpansionCache(lex)
    checks = near_ok = near_n = far_ok = far_n = 0
    failed: list[dict[str, str]] = []
    missing: list[str] = []
    for pair in pairs:
        for x, y in ((pair.a, pair.b), (pair.b, pair.a)):
            if key_of_text(x) not in lex.index and x not in missing:
                missing.append(x)
            hit = _learned(lex, cache, x, y, config.top_k, config.min_similarity)
            checks += 1
            if pair.near:
                near_n += 1
                near_ok += hit
            else:
                far_n += 1
                far_ok += not hit
            if hit != pair.near:
                failed.append({"from": x, "to": y, "expect": "near" if pair.near else "far"})
    score = (near_ok + far_ok) / checks if checks else 0.0
    return {
        "score": round(score, 6),
        "near": round(near_ok / near_n, 6) if near_n else None,
        "far": round(far_ok / far_n, 6) if far_n else None,
        "checks": checks,
        "failed": failed[:50],
        "missing": missing[:50],
    }


def search_impact(
    candidate: Lexicon,
    serving: Lexicon | None,
    decisions: DecisionSet,
    queries: Path,
    postings: Path,
    index_folder: Path,
    out: IO[str],
) -> tuple[dict[str, float], dict[str, float] | None]:
    """Recall@100, nDCG@10 and exact-first of widen's recommended merge with the candidate and with the
    serving bundle, each judged with its own expansion options, on labelled queries over a tantivy
    index of `postings`."""
    labelled = read_queries(queries)
    print(f"[gate] search impact on {len(labelled)} labelled queries", file=out, flush=True)
    index = SearchIndex(postings, index_folder)

    def score(lexicon: Lexicon) -> dict[str, float]:
        report = evaluate(lexicon, decisions, index, labelled, lexicon.options, methods=("all_required", "widen"))
        return {k: report["methods"]["widen"][k] for k in ("recall@100", "ndcg@10", "exact_first")}

    return score(candidate), (score(serving) if serving is not None else None)


@dataclass(frozen=True)
class GateResult:
    passed: bool
    score: float | None
    current_score: float | None
    reasons: list[str]
    details: dict[str, Any]

    def as_dict(self) -> dict[str, Any]:
        return {
            "passed": self.passed,
            "score": self.score,
            "current_score": self.current_score,
            "reasons": self.reasons,
            "details": self.details,
        }


def decide(
    candidate: dict[str, Any] | None,
    current: dict[str, Any] | None,
    config: GateSection,
    structure_problems: list[str],
    impact: dict[str, Any] | None = None,
    current_impact: dict[str, Any] | None = None,
) -> GateResult:
    """Combine the structural checks, the absolute floor, the comparison with the serving bundle
    and, when configured, the search impact on labelled queries."""
    reasons = list(structure_problems)
    if impact is not None and current_impact is not None:
        for metric in ("recall@100", "ndcg@10"):
            if impact[metric] < current_impact[metric] - config.impact_tolerance:
                reasons.append(
                    f"search impact: expanded {metric} {impact[metric]:.4f} is more than gate.impact_tolerance = "
                    f"{config.impact_tolerance:.3f} below the serving bundle's {current_impact[metric]:.4f}"
                )
    score = candidate["score"] if candidate else None
    current_score = current["score"] if current else None
    if candidate is None:
        details: dict[str, Any] = {"note": "no gate pairs configured: only the structure was checked"}
    else:
        details = {"candidate": candidate, "current": current}
        if score is not None and score < config.min_score:
            reasons.append(f"score {score:.3f} is below the floor gate.min_score = {config.min_score:.3f}")
        if score is not None and current_score is not None and score < current_score - config.tolerance:
            reasons.append(
                f"score {score:.3f} is more than gate.tolerance = {config.tolerance:.3f} "
                f"below the serving bundle's {current_score:.3f}"
            )
    if impact is not None:
        details["impact"] = {"candidate": impact, "current": current_impact}
    return GateResult(not reasons, score, current_score, reasons, details)
