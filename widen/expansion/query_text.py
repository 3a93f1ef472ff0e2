"""Query text in the engine's syntax, in one place: widen's own, the seeker's words alone, and the merge.

Every clause is a quoted phrase with a `^` boost; quotes and backslashes cannot reach inside
one, so no input breaks the engine's parser. Inside quotes the parser reads no operators.

widen's query text groups each segment's clauses (the seeker's words, their correction, the
neighbours, a pattern's other spellings) OR'ed in one group, and marks a group required, `+(...)`.
With `match = "all"` (the default) every group is required: the job, a place, a shift pattern
(any of its spellings), a modifier; with `match = "job"` only the job's, and the others only
score (no mark: the engine's optional clause). Noise words ("jobs", "near") are left out. A place
or employer is written into the free text (`places = "text"`) or into its own field of the index
(`places = "field"`: `location:"Hensby"`), where agency boilerplate that lists every town cannot
match it. `full_query` puts the seeker's words, all required and boosted, first, and the same words
as optional terms last, so a posting that spells the pattern otherwise or names no town is still
found, below those that match. This is the classic query syntax that most engines' query parsers read
(common practice, no source); the tests parse every query widen writes with tantivy's parser.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from functools import lru_cache

from widen.expansion.options import ExpansionOptions
from widen.expansion.result import Clause, ExpansionResult, Segment
from widen.text.forms import key_of_phrase

__all__ = [
    "render",
    "group_text",
    "baseline_text",
    "words_text",
    "segments_baseline",
    "segments_words",
    "baseline_term",
    "words_terms",
    "merged_text",
    "BASELINE_BOOST",
    "WORDS_BOOST",
    "JOBS",
    "quoted",
]

#: How a front end keeps the seeker's exact matches first: the baseline query, boosted this much,
#: OR the service's query_text. 0 sends query_text as it is.
BASELINE_BOOST = 10.0
#: The kinds of segment that name the job.
JOBS = ("phrase", "term", "unknown")
_NAMED = ("place", "employer", "protected")

_UNQUOTABLE = str.maketrans("", "", '"\\')


@lru_cache(maxsize=65536)
def _quote(phrase: str) -> str:
    # Tokens never hold a double quote or a backslash; strip them anyway so no input can end
    # the quoted phrase early.
    cleaned = phrase.translate(_UNQUOTABLE)
    if not cleaned.isprintable():
        cleaned = "".join(ch for ch in cleaned if ch.isprintable())
    return f'"{cleaned}"'


def quoted(phrase: str) -> str:
    """A phrase quoted so that no input can end the quotes early."""
    return _quote(phrase)


@lru_cache(maxsize=65536)
def _number(weight: float) -> str:
    return format(weight, ".4f").rstrip("0").rstrip(".") or "0"


def _field_name(name: str) -> str:
    """A field name the parser reads as one (letters, digits, _ and -); anything else is left out."""
    return "".join(ch for ch in name if ch.isalnum() or ch in "_-")


def render(
    clauses: Sequence[Clause],
    segments: Sequence[Segment],
    options: ExpansionOptions,
    names: Mapping[str, tuple[str, str]] | None = None,
) -> str:
    """The clauses as query text: each segment's clauses in one group; a job's group required."""
    groups: dict[int, list[Clause]] = {}
    for c in clauses:
        groups.setdefault(c.segment, []).append(c)
    return " ".join(
        group_text(group, segment, options, names) for s, segment in enumerate(segments) if (group := groups.get(s))
    )


def group_text(
    group: Sequence[Clause],
    segment: Segment,
    options: ExpansionOptions,
    names: Mapping[str, tuple[str, str]] | None = None,
) -> str:
    """One segment's clauses (at least one) as its group of the query text."""
    required = options.operator == "AND" and (segment.kind in JOBS or options.match == "all")
    field = None
    if segment.kind in _NAMED and options.places == "field" and segment.field:
        field = _field_name(options.field_names.get(segment.field, segment.field))
    terms = []
    for c in group:
        if field:
            written = (names or {}).get(key_of_phrase(c.phrase), (segment.field, c.phrase))[1]
            terms.append(f"{field}:{_quote(written)}^{_number(c.weight)}")
        else:
            terms.append(f"{_quote(c.phrase)}^{_number(c.weight)}")
    text = terms[0] if len(terms) == 1 else "(" + " OR ".join(terms) + ")"
    return ("+" if required else "") + text


def baseline_text(result: ExpansionResult, operator: str = "AND") -> str:
    """The seeker's own words only, every segment as typed (noise words too), joined by `operator`: what
    "matches the seeker's words" means for exact-first, and the query widen compared against first."""
    return segments_baseline(result.segments, operator)


def segments_baseline(segments: Sequence[Segment], operator: str = "AND") -> str:
    """`baseline_text` of a result's segments."""
    return f" {operator} ".join(term for s in segments if (term := baseline_term(s.text)))


def baseline_term(text: str) -> str:
    """One segment's term of the baseline ("" for a segment of spaces alone)."""
    return f"{_quote(text)}^1" if text.strip() else ""


#: How much the seeker's words as optional terms weigh in the recommended merge: enough to bring in,
#: after everything else, the postings the engine's own default query would find.
WORDS_BOOST = 0.1


def words_text(result: ExpansionResult) -> str:
    """The seeker's words as optional terms, each quoted (the engine's default query, with no syntax)."""
    return segments_words(result.segments)


def segments_words(segments: Sequence[Segment]) -> str:
    """`words_text` of a result's segments."""
    return " ".join(terms for s in segments if (terms := words_terms(s.text)))


def words_terms(text: str) -> str:
    """One segment's words as optional terms ("" for none)."""
    return " ".join(_quote(w) for w in text.split(" ") if w.strip())


def merged_text(
    baseline: str,
    query_text: str,
    baseline_boost: float = BASELINE_BOOST,
    words: str = "",
    words_boost: float = WORDS_BOOST,
) -> str:
    """The expanded query a front end sends: `(baseline)^B OR (query_text)`, and with `words`,
    `OR (words)^0.1` last; query_text alone when the boost is 0."""
    if baseline_boost <= 0 or not baseline:
        return query_text
    parts = [f"({baseline})^{baseline_boost:g}"]
    if query_text:
        parts.append(f"({query_text})")
    if words:
        parts.append(f"({words})^{words_boost:g}")
    return " OR ".join(parts)
