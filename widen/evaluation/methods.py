"""The queries `widen evaluate` compares: what a search team already has, widen, and a hand-kept list.

Each method is a query a front end could send to the same index, for the same seeker's text:

- `all_required`: the seeker's segments as quoted phrases, every one required (widen's own
  baseline before this evaluation compared against a real engine's default);
- `bag_of_words`: the query's words as optional terms through the engine's analysis with
  stemming: what a search engine does by default, the strongest plain baseline;
- `rm3`: RM3 pseudo-relevance feedback on the bag of words (`widen.evaluation.rm3`), and
  `rm3_merged`, merged the way widen is: `(all_required)^10 OR (rm3)`;
- `widen`: the recommended query, widen's `full_query`: `(all_required)^10 OR (query_text) OR
  (words)^0.1`; `widen_alone`, query_text as it is; `bag_of_words_widen`, widen's clauses added to a
  front end's own bag of words, `(bag_of_words)^10 OR (query_text)`;
- `widen_concepts`: widen's `full_query` with the concept clauses (`widen.expansion.concept_clauses`),
  and `bag_of_words_concepts`, `(bag of words) OR (concept clauses)`: on an index whose postings carry
  their concept tokens (the bundle's own);
- `curated`: a perfect hand-kept list of each job's equivalent titles (the board's truth), applied
  the way a search team applies one: the longest listed title found in the words of the query's
  job segments (whichever way widen split them) is searched with the list's other names for it,
  and the words it does not cover stay as typed; merged the way widen's query is, the seeker's
  words as optional terms last included. It stands for the best a hand-kept list of the same job
  can do; it still leaves out the postings of related jobs (grade 1), which widen may find.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import tantivy

from widen.evaluation.index import SearchIndex
from widen.evaluation.rm3 import RM3
from widen.expansion.options import ExpansionOptions
from widen.expansion.query_text import BASELINE_BOOST, JOBS, baseline_text, merged_text, render, segments_words
from widen.expansion.result import Clause, ExpansionResult
from widen.text.forms import phrase_of_text
from widen.text.tokenize import tokens

__all__ = ["METHODS", "CONCEPT_METHODS", "CuratedList", "bag_of_words_text", "method_queries"]

#: Every method, in the order of the report's tables, with what it is in words.
METHODS: dict[str, str] = {
    "all_required": "the seeker's segments as quoted phrases, all required (AND)",
    "bag_of_words": "plain bag of words: the query's words as optional terms, stemmed (the engine's default)",
    "rm3": "RM3 pseudo-relevance feedback on the bag of words",
    "rm3_merged": "(all required)^10 OR (RM3)",
    "widen": "widen's full_query: (all required)^10 OR (query_text) OR (words)^0.1",
    "widen_alone": "widen's query_text alone",
    "bag_of_words_widen": "(bag of words)^10 OR (query_text): widen added to a front end's own query",
    "curated": "a perfect hand-kept list of each job's equivalent titles, in place of widen's neighbours",
    "widen_concepts": "widen's full_query with concept clauses: ... OR (concepts)",
    "bag_of_words_concepts": "(bag of words) OR (concept clauses)",
}
#: The methods that need an index whose postings carry their concept tokens.
CONCEPT_METHODS = ("widen_concepts", "bag_of_words_concepts")


def bag_of_words_text(query: str) -> str:
    """The query's words as optional terms (the parser's default is OR), each quoted so no input is syntax."""
    return " ".join(f'"{t}"' for t in tokens(query) if '"' not in t and "\\" not in t)


class CuratedList:
    """A hand-kept synonym list: every equivalent title of a job lists the job's other titles.
    Parameters: `truth`, the board's truth ({"families": [{"equivalent": [...]}, ...]})."""

    def __init__(self, truth: dict[str, Any], weight: float = 0.5) -> None:
        self.weight = weight
        self.synonyms: dict[str, list[str]] = {}
        for family in truth["families"]:
            titles = [phrase_of_text(t) for t in family["equivalent"]]
            for title in titles:
                self.synonyms.setdefault(title, []).extend(t for t in titles if t != title)

    def _listed(self, words: list[str]) -> tuple[int, int] | None:
        """The longest run of `words` the list has a title for, as (start, end); None when none."""
        for size in range(len(words), 0, -1):
            for start in range(len(words) - size + 1):
                if " ".join(words[start : start + size]) in self.synonyms:
                    return start, start + size
        return None

    def query_text(
        self, result: ExpansionResult, options: ExpansionOptions, names: Mapping[str, tuple[str, str]]
    ) -> str:
        """The query text a team's synonym list gives: the job's words joined (as corrected, whatever
        segments widen made of them), the longest listed title among them OR'ed with its other names,
        the words the title does not cover as typed; places, patterns (with their spellings) and
        modifiers as widen writes them."""
        jobs = [s for s, segment in enumerate(result.segments) if segment.kind in JOBS]
        segments = list(result.segments)
        clauses: list[Clause] = []
        if jobs:
            words = " ".join(result.segments[s].corrected or result.segments[s].text for s in jobs).split(" ")
            first = jobs[0]
            found = self._listed(words)
            if found is None:
                clauses += [Clause(phrase=w, weight=1.0, original=True, segment=first) for w in words]
            else:
                start, end = found
                title = " ".join(words[start:end])
                clauses.append(Clause(phrase=title, weight=1.0, original=True, segment=first))
                clauses += [
                    Clause(phrase=o, weight=self.weight, original=False, segment=first) for o in self.synonyms[title]
                ]
                rest = words[:start] + words[end:]
                for w in rest:  # each uncovered word a required group of its own, as widen writes a segment
                    segments.append(segments[first].model_copy(update={"text": w}))
                    clauses.append(Clause(phrase=w, weight=1.0, original=True, segment=len(segments) - 1))
        for s, segment in enumerate(result.segments):
            if segment.kind == "noise" or segment.kind in JOBS:
                continue
            clauses.append(Clause(phrase=segment.text, weight=1.0, original=True, segment=s))
            clauses += [
                Clause(phrase=e.phrase, weight=e.weight, original=False, segment=s)
                for e in segment.expansions
                if e.source in ("spelling", "pattern")
            ]
        return render(sorted(clauses, key=lambda c: c.segment), segments, options, names)


def _merged(index: SearchIndex, first: tantivy.Query | None, then: tantivy.Query | None) -> tantivy.Query | None:
    """`(first)^10 OR (then)` for query objects."""
    parts = [(tantivy.Occur.Should, q) for q in (first and tantivy.Query.boost_query(first, BASELINE_BOOST), then) if q]
    return tantivy.Query.boolean_query(parts) if parts else None


def method_queries(
    index: SearchIndex,
    query: str,
    result: ExpansionResult,
    options: ExpansionOptions,
    rm3: RM3,
    curated: CuratedList | None,
    methods: Sequence[str] = tuple(METHODS),
    names: Mapping[str, tuple[str, str]] | None = None,
    with_concepts: ExpansionResult | None = None,
) -> tuple[dict[str, tantivy.Query | None], str]:
    """The query of every method for one seeker's text, and the all-required text (the exact match);
    `with_concepts`, widen's result with the concept clauses on, for the concept methods."""

    def parse(text: str) -> tantivy.Query | None:
        return index.parse(text) if text.strip() else None

    exact = baseline_text(result, "AND")
    bow = bag_of_words_text(query)
    built: dict[str, tantivy.Query | None] = {
        "all_required": parse(exact),
        "bag_of_words": parse(bow),
        "widen": parse(result.full_query),
        "widen_alone": parse(result.query_text),
        "bag_of_words_widen": parse(merged_text(bow, result.query_text)),
    }
    if "rm3" in methods or "rm3_merged" in methods:
        plain = built["bag_of_words"]
        built["rm3"] = rm3.query(index, plain, bow) if plain is not None else None
        built["rm3_merged"] = _merged(index, built["all_required"], built["rm3"])
    if with_concepts is not None:
        built["widen_concepts"] = parse(with_concepts.full_query)
        extra = f" OR ({with_concepts.concept_text})" if with_concepts.concept_text else ""
        built["bag_of_words_concepts"] = parse(f"({bow}){extra}" if bow else with_concepts.concept_text)
    if curated is not None and "curated" in methods:
        curated_text = curated.query_text(result, options, names or {})
        built["curated"] = parse(merged_text(exact, curated_text, words=segments_words(result.segments)))
    return {m: built.get(m) for m in methods if m in built}, exact
