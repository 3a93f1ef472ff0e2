"""Query text in the engine's syntax, in one place: widen's own, the seeker's words alone, and the merge.

Every clause is a quoted phrase with a `^` boost; quotes and backslashes cannot reach inside
one, so no input breaks the engine's parser. Inside quotes the parser reads no operators.
"""

from __future__ import annotations

from collections.abc import Sequence

from widen.result import Clause, ExpansionResult

__all__ = ["render", "baseline_text", "merged_text", "BASELINE_BOOST"]

#: How a front end keeps the seeker's exact matches first: the baseline query, boosted this much,
#: OR the service's query_text. 0 sends query_text as it is.
BASELINE_BOOST = 10.0

_UNQUOTABLE = str.maketrans("", "", '"\\')


def _quote(phrase: str) -> str:
    # Tokens never hold a double quote or a backslash; strip them anyway so no input can end
    # the quoted phrase early.
    cleaned = phrase.translate(_UNQUOTABLE)
    if not cleaned.isprintable():
        cleaned = "".join(ch for ch in cleaned if ch.isprintable())
    return f'"{cleaned}"'


def _number(weight: float) -> str:
    return format(weight, ".4f").rstrip("0").rstrip(".") or "0"


def render(clauses: Sequence[Clause], segments: int, operator: str) -> str:
    """Quoted phrases with ^boosts, OR inside a segment, segments joined by the operator."""
    groups = []
    for s in range(segments):
        parts = [f"{_quote(c.phrase)}^{_number(c.weight)}" for c in clauses if c.segment == s]
        if not parts:
            continue
        groups.append(parts[0] if len(parts) == 1 else "(" + " OR ".join(parts) + ")")
    return f" {operator} ".join(groups)


def baseline_text(result: ExpansionResult, operator: str) -> str:
    """The seeker's own words only: the original clause of every segment."""
    originals = [c for c in result.clauses if c.original]
    return render(originals, len(result.segments), operator)


def merged_text(baseline: str, query_text: str, baseline_boost: float = BASELINE_BOOST) -> str:
    """The expanded query a front end sends: `(baseline)^B OR (query_text)`, or query_text alone."""
    if baseline_boost <= 0 or not baseline:
        return query_text
    return f"({baseline})^{baseline_boost:g} OR ({query_text})"
