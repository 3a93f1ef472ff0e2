"""The files of the Fellhaven Jobs board (`demo_postings.fellhaven`): the dump, the open postings, the
labelled queries with their frequency band and part, the truth, the gate pairs and a day's query log.

Labelled queries are the occupations' own names typed as seekers type them (lower case; some with a
town, some with words that name no job, about one in ten again with a typo), for the occupations
that have an open posting: the preferred label, and one other label chosen as seekers would (by
how often the board uses it). Each query carries:
- `band`, by how many postings of the dump use its title: `head` (the most used titles that cover
  half the postings), `tail` (titles named by fewer than 10 postings), `torso` (the rest);
- `part`, `tune` or `report`, by the ISCO-08 major group of its occupation (`TUNE_GROUPS`).
"""

from __future__ import annotations

import json
import random
from collections import Counter
from collections.abc import Iterable, Sequence
from datetime import date, timedelta
from pathlib import Path
from typing import Any

from demo_postings.fellhaven import TOWNS, Occupation, fellhaven_posting, name_weights, occupations, part_of, popularity
from demo_postings.postings import repost, typo

__all__ = ["generate_fellhaven", "bands", "BOARD_NAME"]

BOARD_NAME = "Fellhaven Jobs (real occupation titles from ESCO)"
TAIL_BELOW = 10
_NOISE = ["{t} jobs", "{t} vacancies", "jobs {t}", "{t} jobs near me"]


def bands(title_counts: Counter[str]) -> dict[str, str]:
    """Each title's frequency band: head (the most used titles that together cover half the postings),
    tail (fewer than `TAIL_BELOW` postings), torso (the rest)."""
    total = sum(title_counts.values())
    out, covered = {}, 0
    for title, n in sorted(title_counts.items(), key=lambda kv: (-kv[1], kv[0])):
        if n < TAIL_BELOW:
            out[title] = "tail"
        elif covered < total / 2:
            out[title] = "head"
        else:
            out[title] = "torso"
        covered += n
    return out


def _postings(count: int, rng: random.Random, day0: date) -> list[dict[str, Any]]:
    jobs = occupations()
    weights = popularity(len(jobs), rng)
    by_group: dict[str, list[str]] = {}
    for job in jobs:
        by_group.setdefault(job.group, []).append(job.preferred)
    rows: list[dict[str, Any]] = []
    originals: list[dict[str, Any]] = []
    for number in range(1, count + 1):
        if originals and rng.random() < 0.05:
            rows.append(repost(rng, rng.choice(originals), number, "fjx"))
            continue
        job = rng.choices(jobs, weights=weights)[0]
        name = rng.choices(job.names, weights=name_weights(job))[0]
        colleagues = [n for n in by_group[job.group] if n != job.preferred]
        row = fellhaven_posting(rng, job, name, colleagues, number, day0)
        originals.append(row)
        rows.append(row)
    return rows


def _relevant(job: Occupation, postings: Sequence[dict[str, Any]], town: str | None) -> dict[str, int]:
    grades = {}
    for p in postings:
        if town is not None and p["location"] != town:
            continue
        if p["_family"] == job.preferred:
            grades[p["id"]] = 2
        elif p["_group"] == job.group:
            grades[p["id"]] = 1
    return dict(sorted(grades.items()))


def _queries(postings: Sequence[dict[str, Any]], open_ids: set[str], rng: random.Random) -> list[dict[str, Any]]:
    jobs = {j.preferred: j for j in occupations()}
    band_of = bands(Counter(p["_name"].lower() for p in postings))
    present = sorted({p["_family"] for p in postings if p["id"] in open_ids})
    out: list[dict[str, Any]] = []

    def add(job: Occupation, kind: str, text: str, title: str, town: str | None, base: str | None) -> str:
        qid = f"q-{len(out) + 1:05d}"
        out.append(
            {
                "id": qid,
                "query": text,
                "family": job.preferred,
                "kind": kind,
                "title": title,
                "town": town,
                "base": base,
                "band": band_of.get(title, "tail"),
                "part": part_of(job),
                "group": job.group,
                "relevant": _relevant(job, postings, town),
            }
        )
        return qid

    for family in present:
        job = jobs[family]
        names = [job.preferred.lower()]
        if len(job.names) > 1:
            others = [n.lower() for n in job.names[1:]]
            names.append(rng.choices(others, weights=name_weights(job)[1:])[0])
        for title in names:
            base = add(job, "title", title, title, None, None)
            if rng.random() < 0.2:
                town = rng.choice(TOWNS)
                add(job, "town", f"{title} {town.lower()}", title, town, None)
            if rng.random() < 0.2:
                add(job, "noise", rng.choice(_NOISE).format(t=title), title, None, base)
    for query in [q for q in out if q["kind"] == "title"]:
        words = query["query"].split(" ")
        long = [i for i, w in enumerate(words) if len(w) >= 5 and w.isalpha()]
        if long and rng.random() < 0.1:
            i = rng.choice(long)
            slipped = " ".join([*words[:i], typo(words[i], rng), *words[i + 1 :]])
            add(jobs[query["family"]], "typo", slipped, query["title"], None, query["id"])
    return out


def _write_jsonl(path: Path, rows: Iterable[dict[str, Any]]) -> None:
    with path.open("w", encoding="utf-8", newline="\n") as fh:
        for row in rows:
            fh.write(json.dumps({k: v for k, v in row.items() if not k.startswith("_")}, ensure_ascii=False) + "\n")


def _pairs(postings: Sequence[dict[str, Any]], rng: random.Random) -> list[tuple[str, str, str]]:
    """Near pairs: two names of one frequent tune-part occupation; far pairs: frequent tune-part
    occupations of different major groups."""
    named = Counter((p["_family"], p["_name"].lower()) for p in postings)
    jobs = {j.preferred: j for j in occupations() if part_of(j) == "tune"}
    frequent: dict[str, list[str]] = {}
    for (family, name), n in named.most_common():
        if family in jobs and n >= 10:
            frequent.setdefault(family, []).append(name)
    rows = [(names[0], other, "near") for names in frequent.values() for other in names[1:3]]
    heads = sorted(frequent)
    for _ in range(min(len(heads), 20)):
        a, b = rng.sample(heads, 2)
        if jobs[a].major != jobs[b].major:
            rows.append((frequent[a][0], frequent[b][0], "far"))
    return rows


def _log(postings: Sequence[dict[str, Any]], rng: random.Random, size: int, day0: date) -> list[dict[str, Any]]:
    """A day's queries: titles as the board uses them, weighted by how often, Zipf-like, with towns, noise
    words and typos now and then."""
    named = Counter(p["_name"].lower() for p in postings)
    pool = [name for name, _ in named.most_common()]
    weights = [1.0 / rank for rank in range(1, len(pool) + 1)]
    out = []
    seconds = sorted(rng.randrange(86400) for _ in range(size))
    start = day0.isoformat()
    for s in seconds:
        q = rng.choices(pool, weights=weights)[0]
        roll = rng.random()
        if roll < 0.15:
            q = f"{q} {rng.choice(TOWNS).lower()}"
        elif roll < 0.3:
            q = rng.choice(_NOISE).format(t=q)
        elif roll < 0.38:
            words = q.split(" ")
            q = " ".join(typo(w, rng) if len(w) >= 5 and rng.random() < 0.5 else w for w in words)
        out.append({"at": f"{start}T{s // 3600:02d}:{s % 3600 // 60:02d}:{s % 60:02d}Z", "q": q})
    return out


def generate_fellhaven(out: Path, count: int, seed: int, open_days: int, log_queries: int, day0: date) -> None:
    rng = random.Random(f"fellhaven-{seed}")
    rows = _postings(count, rng, day0)
    out.mkdir(parents=True, exist_ok=True)
    _write_jsonl(out / "postings.jsonl", rows)
    first_open = (day0 - timedelta(days=open_days - 1)).isoformat()
    open_rows = [row for row in rows if row["posted_at"] >= first_open]
    _write_jsonl(out / "open_postings.jsonl", open_rows)
    _write_jsonl(out / "queries.jsonl", _queries(rows, {r["id"] for r in open_rows}, rng))
    jobs = occupations()
    siblings: dict[str, list[str]] = {}
    for job in jobs:
        siblings.setdefault(job.group, []).append(job.preferred)
    truth = {
        "board": BOARD_NAME,
        "source": "ESCO classification of the European Commission (demo_postings/data/README.md)",
        "families": [
            {
                "name": job.preferred,
                "equivalent": list(job.names),
                "related": [s for s in siblings[job.group] if s != job.preferred],
                "group": job.group,
                "part": part_of(job),
            }
            for job in jobs
        ],
        "coded_titles": [],
    }
    (out / "truth.json").write_text(json.dumps(truth, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    with (out / "pairs.tsv").open("w", encoding="utf-8", newline="\n") as fh:
        fh.write("phrase_a\tphrase_b\texpect\n")
        for a, b, expect in _pairs(rows, rng):
            fh.write(f"{a}\t{b}\t{expect}\n")
    _write_jsonl(out / "query_log.jsonl", _log(rows, random.Random(f"fellhaven-{seed}-log"), log_queries, day0))
