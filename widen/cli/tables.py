"""Plain-text tables for a person at a terminal: aligned columns, and an expansion as rows."""

from __future__ import annotations

from collections.abc import Sequence

from widen.expansion.result import DROP_REASONS, ExpansionResult

__all__ = ["table", "render_expansion"]


def table(rows: Sequence[Sequence[str]]) -> str:
    widths = [max(len(r[c]) for r in rows) for c in range(len(rows[0]))]
    return "\n".join("  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip() for row in rows)


def render_expansion(result: ExpansionResult) -> str:
    """The readable form of an expansion: one row a clause, then what was dropped and why."""
    lines = [f"model {result.model.version} ({result.model.created_at})", ""]
    rows: list[tuple[str, ...]] = [("segment", "kind", "phrase", "similarity", "weight", "relation", "source")]
    for seg in result.segments:
        rows.append((seg.text, seg.kind, seg.text, "", "1", "original", ""))
        for e in seg.expansions:
            rows.append(("", "", e.phrase, f"{e.similarity:.3f}", f"{e.weight:.3f}", e.relation, e.source))
    lines.append(table(rows))
    dropped = [(seg.text, d) for seg in result.segments for d in (seg.dropped or [])]
    if dropped:
        lines += ["", "dropped:"]
        lines.append(
            table(
                [("segment", "phrase", "similarity", "reason", "meaning")]
                + [(s, d.phrase, f"{d.similarity:.3f}", d.reason, DROP_REASONS[d.reason]) for s, d in dropped]
            )
        )
    if result.concepts:
        lines += ["", "concepts (what postings say; the index's concept field):"]
        lines.append(
            table(
                [("token", "similarity", "weight", "its postings' titles")]
                + [(c.token, f"{c.similarity:.3f}", f"{c.weight:.3f}", ", ".join(c.label[:3])) for c in result.concepts]
            )
        )
    lines += ["", "query text:", result.query_text]
    return "\n".join(lines)
