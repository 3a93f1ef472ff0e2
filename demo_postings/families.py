"""What every demo board's ground truth is made of: job families, and the shift patterns a posting has."""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = ["Family", "PATTERNS"]

#: The shift patterns relevance respects: a query that names one wants postings that have it.
PATTERNS = ("part time", "full time", "temporary", "nights", "weekends")


@dataclass(frozen=True)
class Family:
    """One job: titles that mean the same job (equivalent), titles of close but different jobs
    (related, each an equivalent title of another family), the text its postings are written
    with, titles of other jobs it works beside, and its gender-coded titles."""

    name: str
    sector: str
    equivalent: list[str]
    related: list[str]
    duties: list[str]
    needs: list[str]
    colleagues: list[str] = field(default_factory=list)
    coded: list[str] = field(default_factory=list)
