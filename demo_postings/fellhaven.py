"""Fellhaven Jobs: a board whose job titles and job descriptions are real text no one on the project wrote.

The occupations, their names and what they do come from the ESCO classification of the European
Commission (this service uses the ESCO classification of the European Commission; the file and its
licence are in `demo_postings/data/`). Everything around them is invented, in the spirit of
`docs/scenario.md`: the towns, the employers, the boilerplate, the mix of titles.

How a real board looks, and so how this one is made:
- the popularity of jobs is Zipf-like: each occupation gets a rank at random and postings are
  drawn with probability proportional to 1 / rank (a few jobs have hundreds of postings, most a
  handful or none);
- each job's names are Zipf-like too: most postings of an occupation use its preferred label,
  fewer each of its other labels, in an order of the occupation's own;
- titles carry the noise real titles carry: a modifier, the town, a shift pattern, a salary,
  capitals;
- a body is some of the occupation's real description sentences, an opening that names the
  title, now and then a colleague of a neighbouring occupation, invented pay, hours and
  boilerplate;
- relevance: grade 2 for a posting of the same occupation, grade 1 for one of the same ISCO-08
  unit group (the 4-digit code), 0 otherwise.

Every threshold of widen is chosen on the invented boards and on the occupations whose ISCO major
group is 1 or 5 (managers; service and sales workers: the `tune` part); figures are reported on
major groups 3, 7 and 9 (technicians; craft trades; elementary occupations: the `report` part).
"""

from __future__ import annotations

import csv
import gzip
import random
import re
from dataclasses import dataclass
from datetime import date
from functools import cache
from pathlib import Path
from typing import Any

from demo_postings.postings import DUMP_DAYS, article, display_title

__all__ = [
    "Occupation",
    "occupations",
    "TOWNS",
    "TUNE_GROUPS",
    "part_of",
    "fellhaven_posting",
    "popularity",
    "name_weights",
]

DATA = Path(__file__).resolve().parent / "data" / "esco_occupations_odd_major_groups.csv.gz"

#: ISCO-08 major groups every threshold may be chosen on; the others are where figures are reported.
TUNE_GROUPS = frozenset({"1", "5"})

TOWNS = ["Fellhaven", "Ormsby Reach", "Carrow Flats", "Whitlow", "Seddon Moor", "Pennock", "Lathe Bridge", "Dunmarsh"]

_EMPLOYERS = {
    "1": ["Fellhaven Borough Services", "Ormsby Reach Holdings", "Carrow Group", "Whitlow Estates"],
    "3": ["Seddon Moor Laboratories", "Pennock Engineering Works", "Lathe Bridge Technical", "Dunmarsh Instruments"],
    "5": ["The Fellhaven Arcade", "Ormsby Reach Leisure", "Carrow Flats Care Homes", "Whitlow Market Traders"],
    "7": ["Seddon Moor Fabrication", "Pennock Joinery", "Lathe Bridge Print Works", "Dunmarsh Foundry"],
    "9": ["Fellhaven Facilities", "Carrow Flats Cleaning Co", "Whitlow Farm Partners", "Dunmarsh Logistics"],
}
_AGENCIES = ["Reach Recruitment", "Fellside Staffing", "Moorland People"]
_MODIFIERS = ["senior", "junior", "trainee", "lead", "relief"]
#: The shift patterns a title may carry, as employers write them, and the pattern each means.
_PATTERNS = {"part time": "part time", "temporary": "temporary", "nights": "nights", "full time": "full time"}
_BOILERPLATE = [
    "We offer a pension, paid holidays and a cycle to work scheme",
    "Fellhaven is an equal opportunities employer and welcomes applications from everyone",
    "Successful applicants will need to provide proof of their right to work",
    "Training is provided and we support further qualifications",
    "Free parking on site and a subsidised canteen",
    "Apply today with your CV and a short covering note",
]
_OPENINGS = [
    "{employer} in {town} is looking for {a} {t} to join the team.",
    "We are recruiting {a} {t} for our site in {town}.",
    "An opportunity has come up for {a} {t} with {employer}, {town}.",
]
_SENTENCE = re.compile(r"(?<=[.!?])\s+")


@dataclass(frozen=True)
class Occupation:
    """One ESCO occupation: its URI, ISCO-08 unit group, names (the preferred label first) and the
    sentences of its description."""

    uri: str
    group: str
    names: tuple[str, ...]
    description: tuple[str, ...]

    @property
    def preferred(self) -> str:
        return self.names[0]

    @property
    def major(self) -> str:
        return self.group[:1]


def part_of(occupation: Occupation) -> str:
    """`tune` (thresholds may be chosen on it) or `report` (figures are reported on it)."""
    return "tune" if occupation.major in TUNE_GROUPS else "report"


@cache
def occupations() -> tuple[Occupation, ...]:
    """Every occupation of the file, in its order. A name is one occupation's only: a preferred label
    stays with its occupation, and another label two occupations share stays with the first."""
    with gzip.open(DATA, "rt", encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    preferred = [row["preferredLabel"].strip() for row in rows]
    taken = {p.lower() for p in preferred}
    out = []
    for row, label in zip(rows, preferred, strict=True):
        others = [a.strip() for a in row["altLabels"].split("\n") if a.strip() and a.strip().lower() not in taken]
        others = list(dict.fromkeys(others))
        taken.update(a.lower() for a in others)
        sentences = tuple(s.strip() for s in _SENTENCE.split(row["description"].strip()) if s.strip())
        out.append(Occupation(row["conceptUri"], row["iscoGroup"], (label, *others), sentences))
    return tuple(out)


def popularity(count: int, rng: random.Random, exponent: float = 1.0) -> list[float]:
    """A Zipf-like weight for each of `count` occupations: 1 / rank^s for a rank drawn at random."""
    ranks = list(range(1, count + 1))
    rng.shuffle(ranks)
    return [1.0 / r**exponent for r in ranks]


def name_weights(occupation: Occupation, exponent: float = 1.2) -> list[float]:
    """How often postings use each of an occupation's names: the preferred label most, then the other
    labels in an order of the occupation's own (Zipf-like, from a stream seeded by its URI)."""
    others = list(range(1, len(occupation.names)))
    random.Random(occupation.uri).shuffle(others)
    weights = [0.0] * len(occupation.names)
    weights[0] = 1.0
    for rank, n in enumerate(others, start=2):
        weights[n] = 1.0 / rank**exponent
    return weights


def _title(rng: random.Random, name: str, town: str) -> tuple[str, set[str]]:
    title, patterns = display_title(name), set()
    if rng.random() < 0.2:
        title = f"{display_title(rng.choice(_MODIFIERS))} {title}"
    if rng.random() < 0.15:
        spelled = rng.choice(list(_PATTERNS))
        title = f"{title} ({display_title(spelled)})"
        patterns.add(_PATTERNS[spelled])
    if rng.random() < 0.3:
        title = f"{title} - {town}"
    if rng.random() < 0.1:
        title = f"{title} | &pound;{rng.uniform(11.5, 19):.2f}ph"
    if rng.random() < 0.05:
        title = title.upper() + rng.choice([" - IMMEDIATE START", "!!", ""])
    return title, patterns


def fellhaven_posting(
    rng: random.Random,
    occupation: Occupation,
    name: str,
    colleagues: list[str],
    number: int,
    day0: date,
) -> dict[str, Any]:
    """One posting of `occupation` titled with `name`; `colleagues` are names of occupations of the same
    unit group, which a posting may mention in passing."""
    agency = rng.random() < 0.2
    employer = rng.choice(_AGENCIES) if agency else rng.choice(_EMPLOYERS[occupation.major])
    town = rng.choice(TOWNS)
    title, patterns = _title(rng, name, town)
    opening = rng.choice(_OPENINGS).format(employer=employer, town=town, a=article(name.lower()), t=name)
    said = list(occupation.description)
    if len(said) > 1:
        keep = sorted(rng.sample(range(len(said)), k=rng.randint(max(1, len(said) - 2), len(said))))
        said = [said[i] for i in keep]
    parts = [f"<p>{opening}</p>", "<ul>" + "".join(f"<li>{s}</li>" for s in said) + "</ul>"]
    if colleagues and rng.random() < 0.3:
        parts.append(f"<p>You will work alongside our {rng.choice(colleagues)} team.</p>")
    hours = rng.choice(["37.5 hours a week", "Shifts on a rota", "Hours agreed at interview"])
    pay = f"&pound;{int(rng.uniform(19000, 42000) / 500) * 500:,} a year"
    parts.append(f"<p><b>Pay:</b> {pay} &nbsp;|&nbsp; <b>Hours:</b> {hours}</p>")
    parts.extend(f"<p>{b}.</p>" for b in rng.sample(_BOILERPLATE, k=2))
    return {
        "id": f"fjx-{number:06d}",
        "title": title,
        "description": "\n".join(parts),
        "location": town,
        "employer": employer,
        "posted_at": (day0.fromordinal(day0.toordinal() - rng.randint(0, DUMP_DAYS))).isoformat(),
        "_family": occupation.preferred,
        "_group": occupation.group,
        "_name": name,
        "_patterns": sorted(patterns),
    }
