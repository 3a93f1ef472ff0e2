"""Generate a demo board's dump: postings, open postings, labelled queries, truth, gate pairs and a
day's query log (`query_log.jsonl`, for replaying traffic: `demo_postings/query_log.py`).

Two invented boards (docs/scenario.md describes both): `tollbridge`, Tollbridge Valley Jobs, on
which widen's thresholds and defaults were chosen; and `oxmere`, Oxmere Bay Work, written
differently, on which they are reported. A third, `fellhaven`, Fellhaven Jobs, has real job titles
and descriptions (ESCO; `demo_postings/fellhaven.py`). The output is deterministic: the same
arguments give byte-identical files.

    python -m demo_postings.generate --board tollbridge --out build/demo --postings 20000 --seed 7
"""

from __future__ import annotations

import argparse
import json
import random
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import date, timedelta
from pathlib import Path
from typing import Any

from demo_postings import oxmere, tollbridge
from demo_postings.families import Family
from demo_postings.fellhaven_board import BOARD_NAME as FELLHAVEN
from demo_postings.fellhaven_board import generate_fellhaven
from demo_postings.postings import oxmere_posting, repost, tollbridge_posting
from demo_postings.queries import labelled_queries
from demo_postings.query_log import query_log

__all__ = ["generate", "BOARDS", "BOARD_NAMES", "OPEN_DAYS"]

# Postings stay open about a week on these boards; the dump spans 60 days.
OPEN_DAYS = 7
DAY0 = date(2026, 11, 30)


@dataclass(frozen=True)
class Board:
    name: str
    id_prefix: str
    families: list[Family]
    towns: list[str]
    write: Callable[[random.Random, Family, int, date], dict[str, Any]]
    far_pairs: list[tuple[str, str]]


BOARDS = {
    "tollbridge": Board(
        "Tollbridge Valley Jobs",
        "tvj",
        tollbridge.FAMILIES,
        tollbridge.TOWNS,
        tollbridge_posting,
        [
            ("waiter", "server administrator"),
            ("server", "systems administrator"),
            ("staff nurse", "nursery nurse"),
            ("registered nurse", "early years practitioner"),
            ("forklift operator", "call centre operator"),
            ("machine operator", "call centre operator"),
            ("flt driver", "hgv driver"),
            ("hgv driver", "chef de partie"),
            ("electrician", "teaching assistant"),
            ("kitchen porter", "bookkeeper"),
            ("carpenter", "barista"),
            ("sysadmin", "care worker"),
        ],
    ),
    "oxmere": Board(
        "Oxmere Bay Work",
        "oxb",
        oxmere.FAMILIES,
        oxmere.TOWNS,
        oxmere_posting,
        [
            ("dental nurse", "staff nurse"),
            ("nursery nurse", "registered nurse"),
            ("kitchen assistant", "dental assistant"),
            ("bus driver", "forklift driver"),
            ("vehicle technician", "maintenance technician"),
            ("security officer", "care assistant"),
            ("cashier", "bookkeeper"),
        ],
    ),
}


#: Every board's name, the real-vocabulary board's included.
BOARD_NAMES = {**{key: board.name for key, board in BOARDS.items()}, "fellhaven": FELLHAVEN}


def _write_jsonl(path: Path, rows: Iterable[dict[str, Any]]) -> None:
    """One JSON object a line, UTF-8, fields starting with _ (the generator's own truth) left out."""
    with path.open("w", encoding="utf-8", newline="\n") as fh:
        for row in rows:
            public = {k: v for k, v in row.items() if not k.startswith("_")}
            fh.write(json.dumps(public, ensure_ascii=False) + "\n")


def _pairs(board: Board) -> list[tuple[str, str, str]]:
    rows: list[tuple[str, str, str]] = []
    for family in board.families:
        head = family.equivalent[0]
        rows.extend((head, other, "near") for other in family.equivalent[1:])
    # Far pairs: the board's polysemy traps and unrelated sectors.
    rows.extend((a, b, "far") for a, b in board.far_pairs)
    return rows


def generate(
    out: Path,
    postings: int,
    seed: int,
    open_days: int = OPEN_DAYS,
    board: str = "tollbridge",
    log_queries: int = 20000,
) -> None:
    if board == "fellhaven":
        generate_fellhaven(out, postings, seed, open_days, log_queries, DAY0)
        return
    chosen = BOARDS[board]
    rng = random.Random(seed)
    # Larger families get more postings, as on a real board.
    weights = [3 if len(f.equivalent) >= 4 else 1 for f in chosen.families]
    originals: list[dict[str, Any]] = []
    rows: list[dict[str, Any]] = []
    for number in range(1, postings + 1):
        if originals and rng.random() < 0.05:
            row = repost(rng, rng.choice(originals), number, chosen.id_prefix)
        else:
            family = rng.choices(chosen.families, weights=weights)[0]
            row = chosen.write(rng, family, number, DAY0)
            originals.append(row)
        rows.append(row)

    out.mkdir(parents=True, exist_ok=True)
    _write_jsonl(out / "postings.jsonl", rows)
    # The live search index holds only the postings still open: those of the last `open_days` days.
    # The dump (postings.jsonl) is the board's history, which is what training learns from.
    first_open = (DAY0 - timedelta(days=open_days - 1)).isoformat()
    _write_jsonl(out / "open_postings.jsonl", (row for row in rows if row["posted_at"] >= first_open))
    # Relevance is judged over the whole dump; an evaluation counts the postings its index holds.
    _write_jsonl(out / "queries.jsonl", labelled_queries(chosen.families, rows, chosen.towns, rng))
    truth = {
        "board": chosen.name,
        "families": [{"name": f.name, "equivalent": f.equivalent, "related": f.related} for f in chosen.families],
        # Gender-coded titles (see the README's caution): expanding to them, or blocking them, both matter.
        "coded_titles": sorted({t for f in chosen.families for t in f.coded}),
    }
    (out / "truth.json").write_text(json.dumps(truth, indent=2) + "\n", encoding="utf-8")
    with (out / "pairs.tsv").open("w", encoding="utf-8", newline="\n") as fh:
        fh.write("phrase_a\tphrase_b\texpect\n")
        for a, b, expect in _pairs(chosen):
            fh.write(f"{a}\t{b}\t{expect}\n")
    # The log has its own random stream, so the files above stay as they were without it.
    log_rng = random.Random(f"{seed}-query-log")
    _write_jsonl(out / "query_log.jsonl", query_log(chosen.families, chosen.towns, log_rng, log_queries, DAY0))


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(
        description="Write a demo board's dump (postings, open postings, queries, truth, gate pairs).",
        epilog="example: python -m demo_postings.generate --board oxmere --out build/oxmere --postings 20000 --seed 7",
    )
    parser.add_argument(
        "--board", choices=sorted(BOARD_NAMES), default="tollbridge", help="which board (default tollbridge)"
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
    parser.add_argument(
        "--log-queries", type=int, default=20000, help="queries in query_log.jsonl, a day's traffic (default 20000)"
    )
    args = parser.parse_args(argv)
    if args.postings < 1:
        parser.error("--postings must be at least 1")
    if args.open_days < 1:
        parser.error("--open-days must be at least 1")
    if args.log_queries < 0:
        parser.error("--log-queries must be at least 0")
    generate(args.out, args.postings, args.seed, args.open_days, args.board, args.log_queries)
    print(f"wrote {args.postings} postings of {BOARD_NAMES[args.board]} to {args.out}")


if __name__ == "__main__":
    main()
