"""Gender- and age-coded wording in a title: the worklist's check for an expansion that brings one in.

Three lists, each with where it comes from:

- **gender-coded words in job adverts**: the masculine- and feminine-coded word stems of Gaucher,
  Friesen & Kay (2011), "Evidence that gendered wording in job advertisements exists and sustains
  gender inequality", Journal of Personality and Social Psychology 101(1), appendix. Written here
  from memory of that appendix: check it against the paper before you rely on a single stem. A stem
  matches a word that starts with it ("compet" matches "competitive");
- **gendered title words** ("waitress", "handyman", "ward sister"): titles that name the holder's sex.
  Common practice, no source: the words many equal-opportunity guides ask adverts to avoid;
- **age-coded words** ("young", "energetic", "recent graduate"): common practice, no source.

A board adds its own (`--coded`, one title or word a line) on top. The published stems were made for
the text of adverts, and on titles they are a weaker signal ("support worker" has the feminine-coded
stem "support"; none of the demo boards' coded titles has a stem of the list: they name the holder's
sex), so the worklist keeps them apart: `coded` for titles that name the holder's sex or age or are
on the board's list, `coded_wording` for the published stems. Each flag names its list.
"""

from __future__ import annotations

from collections.abc import Iterable

__all__ = ["CodedCheck", "GAUCHER_MASCULINE", "GAUCHER_FEMININE", "GENDERED_TITLE_WORDS", "AGE_CODED"]

GAUCHER_MASCULINE = (
    "active", "adventurous", "aggress", "ambitio", "analy", "assert", "athlet", "autonom", "boast", "challeng",
    "compet", "confident", "courag", "decide", "decisive", "decision", "determin", "dominant", "domina", "force",
    "greedy", "headstrong", "hierarch", "hostil", "impulsive", "independen", "individual", "intellect", "lead",
    "logic", "masculine", "objective", "opinion", "outspoken", "persist", "principle", "reckless", "stubborn",
    "superior", "self-confiden", "self-relian", "self-sufficien",
)  # fmt: skip
GAUCHER_FEMININE = (
    "affectionate", "child", "cheer", "commit", "communal", "compassion", "connect", "considerate", "cooperat",
    "depend", "emotiona", "empath", "feminine", "flatterable", "gentle", "honest", "interpersonal",
    "interdependen", "kind", "kinship", "loyal", "modesty", "nag", "nurtur", "pleasant", "polite", "quiet",
    "respon", "sensitiv", "submissive", "support", "sympath", "tender", "together", "trust", "understand",
    "warm", "whin", "yield",
)  # fmt: skip
GENDERED_TITLE_WORDS = (
    "waitress", "hostess", "stewardess", "manageress", "actress", "seamstress", "headmistress", "mistress",
    "barmaid", "chambermaid", "maid", "handyman", "barman", "chairman", "foreman", "salesman", "saleswoman",
    "fireman", "postman", "dustman", "tradesman", "workman", "repairman", "doorman", "milkman", "groundsman",
    "craftsman", "linesman", "storeman", "cameraman", "deliveryman", "sister", "girl", "girls", "boy", "boys",
    "lad", "lads", "lady", "ladies", "gentleman", "gentlemen", "wife", "mother", "matron", "woman", "women",
    "man", "men", "male", "female",
)  # fmt: skip
AGE_CODED = ("young", "youthful", "energetic", "fresh", "mature", "recent graduate", "digital native",
             "school leaver")  # fmt: skip


class CodedCheck:
    """Whether a title holds coded wording, and which list says so. Parameters: `extra`, the board's own
    coded titles or words (matched as whole words)."""

    def __init__(self, extra: Iterable[str] = ()) -> None:
        self.extra = tuple(sorted({" ".join(e.lower().split()) for e in extra if e.strip()}))

    def reasons(self, title: str) -> list[str]:
        """Each word of `title` that names the holder's sex or age or is on the board's list, in words."""
        words = title.lower().replace("-", " ").split()
        text = f" {' '.join(words)} "
        found = [f"'{c}' is on the board's own list of coded titles" for c in self.extra if f" {c} " in text]
        found += [
            f"'{w}' names the holder's sex (gendered title words; common practice, no source)"
            for w in words
            if w in GENDERED_TITLE_WORDS
        ]
        found += [f"'{p}' is age-coded (common practice, no source)" for p in AGE_CODED if f" {p} " in text]
        return list(dict.fromkeys(found))

    def wording(self, title: str) -> list[str]:
        """Each word of `title` with a gender-coded stem of the published list, in words: a weaker signal,
        since the list was made for the text of adverts, not for titles."""
        found = []
        for w in title.lower().replace("-", " ").split():
            for stems, kind in ((GAUCHER_MASCULINE, "masculine"), (GAUCHER_FEMININE, "feminine")):
                stem = next((s for s in stems if w.startswith(s)), None)
                if stem is not None:
                    found.append(f"'{w}' has the {kind}-coded stem '{stem}' (Gaucher, Friesen & Kay 2011)")
        return list(dict.fromkeys(found))
