"""Generate the Tollbridge Valley Jobs demo dump: postings, labelled queries, truth and gate pairs.

Everything here is invented (docs/scenario.md describes the world; the tables are in
`tollbridge.py`). The output is deterministic: the same arguments give byte-identical files.

    python -m demo_postings.generate --out build/demo --postings 20000 --seed 7
"""

from __future__ import annotations

import argparse
import json
import random
import re
from collections.abc import Iterable
from datetime import date, timedelta
from pathlib import Path
from typing import Any

from demo_postings.tollbridge import (
    AGENCIES,
    BOILERPLATE,
    EMPLOYERS,
    FAMILIES,
    HOUSE_STYLE,
    MODIFIERS,
    SALARY,
    SECTOR_LINES,
    SHIFTS,
    TOWNS,
    Family,
)


def _salary(rng: random.Random, sector: str) -> str:
    low, high, unit = rng.choice(SALARY[sector])
    if unit == "hr":
        value = round(rng.uniform(low, high), 2)
        return f"&pound;{value:.2f}/hr"
    a = int(rng.uniform(low, high) / 500) * 500
    b = a + rng.choice([1500, 2500, 3000, 4000])
    return f"&pound;{a:,} - &pound;{b:,}"


def _display_title(title: str) -> str:
    words = []
    for word in title.split(" "):
        if word in {"rn", "hca", "kp", "hgv", "flt", "ta", "it", "anp", "cnc", "c+e"}:
            words.append(word.upper())
        elif word in {"de", "of"}:
            words.append(word)
        else:
            words.append(word[:1].upper() + word[1:])
    return " ".join(words)


def _article(title: str) -> str:
    spoken_vowel = title[0] in "aeiou" or title.split(" ")[0] in {"rn", "hgv", "flt", "hca", "h.c.a."}
    return "an" if spoken_vowel else "a"


# Postings stay open about a week on this board; the dump spans 60 days.
OPEN_DAYS = 7


def _fill(template: str, title: str) -> str:
    """Put the title into a sentence, with the article that goes before it."""
    return re.sub(r"\b(?:a|an) \{t\}", f"{_article(title)} {title}", template).format(t=title)


def _variant(rng: random.Random, family: Family, bias: int) -> str:
    """Most postings use one variant throughout (the synonym gap); employers lean to one."""
    variants = family.equivalent
    weights = [3 if i == bias % len(variants) else 2 for i in range(len(variants))]
    return rng.choices(variants, weights=weights)[0]


def _posting(rng: random.Random, family: Family, number: int, day0: date) -> dict[str, str]:
    employer = rng.choice(EMPLOYERS[family.sector] + ([rng.choice(AGENCIES)] if rng.random() < 0.15 else []))
    town = rng.choice(TOWNS)
    bias = HOUSE_STYLE[employer]
    title_variant = _variant(rng, family, bias)
    # "hca" has a dotted and a spelled-out form in some postings (word-form trap).
    text_variant = title_variant
    if title_variant == "hca" and rng.random() < 0.3:
        text_variant = rng.choice(["h.c.a.", "health care assistant"])
    title = _display_title(title_variant)
    if rng.random() < 0.3:
        modifier = rng.choice(MODIFIERS)
        title = f"{_display_title(modifier)} {title}" if modifier != "nights" else f"{title} - Nights"
    # A minority name a second variant next to the first ("Staff Nurse (RN)").
    second = None
    if rng.random() < 0.12:
        others = [v for v in family.equivalent if v != title_variant]
        second = rng.choice(others)
        title = f"{title} ({_display_title(second)})"
    if rng.random() < 0.35:
        title = f"{title} - {town}"

    lines = []
    article = _article(text_variant)
    lines.append(f"<p>{employer} in {town} is looking for {article} <strong>{text_variant}</strong> to join us.</p>")
    duties = rng.sample(family.duties, k=min(len(family.duties), rng.randint(2, 4)))
    needs = rng.sample(family.needs, k=min(len(family.needs), rng.randint(1, 2)))
    bullets = [_fill(d, text_variant) for d in duties]
    if second:
        bullets.append(f"This role is also advertised as {second}.")
    if family.colleagues and rng.random() < 0.6:
        bullets.append(f"You will work alongside our {rng.choice(family.colleagues)} team.")
    lines.append("<ul>" + "".join(f"<li>{b}</li>" for b in bullets) + "</ul>")
    lines.append("<p>" + " ".join(_fill(n, text_variant) + "." for n in needs) + "</p>")
    lines.append(f"<p>{rng.choice(SECTOR_LINES[family.sector])}.</p>")
    shift = rng.choice(SHIFTS[family.sector])
    lines.append(f"<p><b>Pay:</b> {_salary(rng, family.sector)} &nbsp;|&nbsp; <b>Hours:</b> {shift}</p>")
    lines.extend(f"<p>{b}</p>" for b in rng.sample(BOILERPLATE, k=2))
    posted = day0 - timedelta(days=rng.randint(0, 60))
    return {
        "id": f"tvj-{number:06d}",
        "title": title,
        "description": "\n".join(lines),
        "location": town,
        "employer": employer,
        "posted_at": posted.isoformat(),
        "_family": family.name,
    }


def _near_repost(rng: random.Random, original: dict[str, str], number: int) -> dict[str, str]:
    repost = dict(original)
    repost["id"] = f"tvj-{number:06d}"
    if rng.random() < 0.5:
        # Near-exact: markup or spacing changes, the words stay.
        repost["description"] = original["description"].replace("<p>", "<p> ").replace("&nbsp;", " ")
    return repost


def _queries(families: list[Family], postings: list[dict[str, str]], rng: random.Random) -> list[dict[str, Any]]:
    by_family: dict[str, list[str]] = {}
    for p in postings:
        by_family.setdefault(p["_family"], []).append(p["id"])
    title_to_family = {t: f.name for f in families for t in f.equivalent}
    queries = []
    for family in families:
        related_families = sorted({title_to_family[r] for r in family.related if r in title_to_family})
        relevant: dict[str, int] = {}
        for rel in related_families:
            relevant.update({pid: 1 for pid in by_family.get(rel, [])})
        relevant.update({pid: 2 for pid in by_family.get(family.name, [])})
        texts = list(family.equivalent)
        texts.append(f"{rng.choice(family.equivalent)} {rng.choice(TOWNS).lower()}")
        texts.append(
            f"{rng.choice(['night shift', 'part time', 'senior', 'temporary'])} {rng.choice(family.equivalent)}"
        )
        for i, text in enumerate(texts):
            queries.append(
                {
                    "id": f"q-{family.name.replace(' ', '-')}-{i + 1}",
                    "query": text,
                    "family": family.name,
                    "relevant": dict(sorted(relevant.items())),
                }
            )
    return queries


def _pairs(families: list[Family]) -> list[tuple[str, str, str]]:
    rows: list[tuple[str, str, str]] = []
    for family in families:
        head = family.equivalent[0]
        rows.extend((head, other, "near") for other in family.equivalent[1:])
    # Far pairs: the polysemy traps of the scenario and unrelated sectors.
    rows.extend(
        [
            ("waiter", "server administrator", "far"),
            ("server", "systems administrator", "far"),
            ("staff nurse", "nursery nurse", "far"),
            ("registered nurse", "early years practitioner", "far"),
            ("forklift operator", "call centre operator", "far"),
            ("machine operator", "call centre operator", "far"),
            ("flt driver", "hgv driver", "far"),
            ("hgv driver", "chef de partie", "far"),
            ("electrician", "teaching assistant", "far"),
            ("kitchen porter", "bookkeeper", "far"),
            ("carpenter", "barista", "far"),
            ("sysadmin", "care worker", "far"),
        ]
    )
    return rows


def _write_jsonl(path: Path, rows: Iterable[dict[str, Any]]) -> None:
    """One JSON object a line, UTF-8, fields starting with _ (the generator's own truth) left out."""
    with path.open("w", encoding="utf-8", newline="\n") as fh:
        for row in rows:
            public = {k: v for k, v in row.items() if not k.startswith("_")}
            fh.write(json.dumps(public, ensure_ascii=False) + "\n")


def generate(out: Path, postings: int, seed: int, open_days: int = OPEN_DAYS) -> None:
    rng = random.Random(seed)
    day0 = date(2026, 11, 30)
    # Larger families get more postings, as on a real board.
    weights = [3 if len(f.equivalent) >= 4 else 1 for f in FAMILIES]
    originals: list[dict[str, str]] = []
    rows: list[dict[str, str]] = []
    for number in range(1, postings + 1):
        if originals and rng.random() < 0.05:
            row = _near_repost(rng, rng.choice(originals), number)
        else:
            family = rng.choices(FAMILIES, weights=weights)[0]
            row = _posting(rng, family, number, day0)
            originals.append(row)
        rows.append(row)

    out.mkdir(parents=True, exist_ok=True)
    _write_jsonl(out / "postings.jsonl", rows)
    # The live search index holds only the postings still open: those of the last `open_days` days.
    # The dump (postings.jsonl) is the board's history, which is what training learns from.
    first_open = (day0 - timedelta(days=open_days - 1)).isoformat()
    open_rows = [row for row in rows if row["posted_at"] >= first_open]
    _write_jsonl(out / "open_postings.jsonl", open_rows)
    # Relevance is judged over the open postings, the index a seeker searches.
    _write_jsonl(out / "queries.jsonl", _queries(FAMILIES, open_rows, rng))
    truth = {"families": [{"name": f.name, "equivalent": f.equivalent, "related": f.related} for f in FAMILIES]}
    (out / "truth.json").write_text(json.dumps(truth, indent=2) + "\n", encoding="utf-8")
    with (out / "pairs.tsv").open("w", encoding="utf-8", newline="\n") as fh:
        fh.write("phrase_a\tphrase_b\texpect\n")
        for a, b, expect in _pairs(FAMILIES):
            fh.write(f"{a}\t{b}\t{expect}\n")


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(
        description="Write the Tollbridge Valley Jobs demo dump (postings, queries, truth, gate pairs).",
        epilog="example: python -m demo_postings.generate --out build/demo --postings 20000 --seed 7",
    )
    parser.add_argument("--out", type=Path, required=True, help="folder to write into (created if missing)")
    parser.add_argument("--postings", type=int, default=20000, help="number of postings (default 20000)")
    parser.add_argument("--seed", type=int, default=7, help="random seed (default 7)")
    parser.add_argument(
        "--open-days",
        type=int,
        default=OPEN_DAYS,
        help=f"postings of the last N days form open_postings.jsonl, the search index (default {OPEN_DAYS})",
    )
    args = parser.parse_args(argv)
    if args.postings < 1:
        parser.error("--postings must be at least 1")
    if args.open_days < 1:
        parser.error("--open-days must be at least 1")
    generate(args.out, args.postings, args.seed, args.open_days)
    print(f"wrote {args.postings} postings to {args.out}")


if __name__ == "__main__":
    main()
