"""The `widen` command's arguments: one subcommand per job, each with examples in its --help."""

from __future__ import annotations

import argparse
import os
from pathlib import Path

from widen.cli import bundles, evaluating, expanding, reviewing, serving, tagging, training, worklist

__all__ = ["build_parser"]

_FORMAT = argparse.RawDescriptionHelpFormatter


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="widen",
        description="Query expansion for job-posting search: learn neighbour phrases from your postings "
        "and turn a seeker's phrase into boosted query fragments.",
        formatter_class=_FORMAT,
        epilog="examples:\n  widen train --corpus build/demo/postings.jsonl --store build/store\n"
        "  widen bundles --store build/store\n",
    )
    parser.add_argument("-v", "--verbose", action="store_true", help="log library messages too")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    p = sub.add_parser(
        "train",
        help="learn a bundle from a postings dump and publish it if the gate passes",
        formatter_class=_FORMAT,
        description="Read a dump of postings (JSON Lines or CSV, plain or gzip), mine phrases, fit skip-gram "
        "embeddings, precompute neighbours, score the gate and publish a new bundle.\n"
        "Exit codes: 0 published, 1 failure, 2 bad input, 3 refused by the gate (kept as rejected).",
        epilog="examples:\n"
        "  widen train --corpus build/demo/postings.jsonl --store build/store --config demo_postings/widen.toml\n"
        "  widen train --corpus /data/dumps/tollbridge-2026-11-30.jsonl.gz --store /srv/widen --force\n"
        "  widen train --print-config > widen.toml",
    )
    p.add_argument("--corpus", type=Path, help="the postings dump")
    p.add_argument("--store", type=Path, help="the store folder (created if missing)")
    p.add_argument("--config", type=Path, help="TOML config; every key has a default (see --print-config)")
    p.add_argument("--pairs", type=Path, help="gate pairs file, overriding gate.pairs of the config")
    p.add_argument("--force", action="store_true", help="promote even if the gate refuses (recorded as forced)")
    p.add_argument("--print-config", action="store_true", help="print the effective config as TOML and stop")
    p.set_defaults(handler=training.train)

    p = sub.add_parser(
        "bundles",
        help="list the bundles of a store with status and gate score",
        formatter_class=_FORMAT,
        epilog="examples:\n  widen bundles --store build/store\n  widen bundles --store build/store --json",
    )
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--json", action="store_true", help="JSON output")
    p.set_defaults(handler=bundles.bundles)

    p = sub.add_parser(
        "promote",
        help="make a bundle the serving one",
        formatter_class=_FORMAT,
        epilog="examples:\n  widen promote 20261130T021500123456Z-3f2a1c9d --store build/store\n"
        "  widen promote 20261130T021500123456Z-3f2a1c9d --store build/store --force  # a rejected one",
    )
    p.add_argument("version")
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--force", action="store_true", help="allow a bundle that the gate refused")
    p.set_defaults(handler=bundles.promote)

    p = sub.add_parser(
        "rollback",
        help="return to the bundle that served before the current one",
        formatter_class=_FORMAT,
        epilog="examples:\n  widen rollback --store build/store",
    )
    p.add_argument("--store", type=Path, required=True)
    p.set_defaults(handler=bundles.rollback)

    p = sub.add_parser(
        "serve",
        help="serve the expansion API over HTTP",
        formatter_class=_FORMAT,
        description="Every setting can also come from the environment (WIDEN_STORE, WIDEN_PORT, "
        "WIDEN_ADMIN_TOKEN, ...; see the README). Binds 127.0.0.1 unless told otherwise.",
        epilog="examples:\n  widen serve --store build/store\n"
        "  WIDEN_ADMIN_TOKEN=s3cret widen serve --store /srv/widen/store --host 0.0.0.0 --port 8080 --workers 2",
    )
    p.add_argument("--store", help="the store folder, or its URL (http(s)://, file://; served from a local mirror)")
    p.add_argument("--host")
    p.add_argument("--port", type=int)
    p.add_argument("--workers", type=int)
    p.add_argument("--demo-index", type=Path, metavar="POSTINGS", help="also serve the demo search page over this dump")
    p.set_defaults(handler=serving.serve)

    p = sub.add_parser(
        "expand",
        help="show what a query expands to with the current bundle and the reviewer decisions",
        formatter_class=_FORMAT,
        epilog="examples:\n  widen expand 'lorry driver' --store build/store\n"
        "  widen expand 'night shift staff nurse hensby' --store build/store --explain\n"
        "  widen expand '\"class 1 driver\"' --store build/store --json --max 3",
    )
    p.add_argument("query")
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--bundle", help="a bundle version other than the current one")
    _decisions_url(p)
    p.add_argument("--json", action="store_true", help="the result as JSON (the API's result model)")
    p.add_argument("--explain", action="store_true", help="also list the dropped neighbours and why")
    p.add_argument("--max", type=int, help="at most this many expansions a segment (default 5)")
    p.add_argument("--min-similarity", type=float, help="drop neighbours below this cosine (default 0.7)")
    p.add_argument("--strict", action="store_true", help="leave out neighbours hinted as a related, different job")
    p.add_argument(
        "--places", choices=["text", "field"], help="a place or employer in the free text (default) or its field"
    )
    p.add_argument(
        "--match", choices=["job", "all"], help="require every segment but noise words (default) or only the job"
    )
    p.add_argument("--concepts", action="store_true", help="add concept clauses (the index must hold the tokens)")
    p.set_defaults(handler=expanding.expand)

    p = sub.add_parser(
        "tag",
        help="write each posting's concept tokens, for the board's index (JSON Lines)",
        formatter_class=_FORMAT,
        description="Tag every posting of a dump (JSON Lines or CSV, plain or gzip; fields id, title, "
        "description) with its concept tokens from the serving bundle: one JSON object a line, "
        '{"id": ..., "concepts": "wc32n3 wc128n70 wc512n301"}, to index in a field of its own.\n'
        "Tag again when `widen bundles` shows a new concept lineage (docs/concepts.md).",
        epilog="examples:\n"
        "  widen tag --corpus build/demo/open_postings.jsonl --store build/store --out build/tags.jsonl\n"
        "  widen tag --corpus /data/new-postings.jsonl --store /srv/widen > tags.jsonl",
    )
    p.add_argument("--corpus", type=Path, required=True, help="the postings to tag")
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--bundle", help="a bundle version other than the current one")
    p.add_argument("--out", type=Path, help="the output file (written whole or not at all); default stdout")
    p.set_defaults(handler=tagging.tag)

    p = sub.add_parser(
        "evaluate",
        help="measure what expansion does to search results on labelled queries (tantivy BM25)",
        formatter_class=_FORMAT,
        description="Index the postings with tantivy (once per dump and window), run every labelled query with "
        "every method (the seeker's phrases all required, the plain bag of words, RM3, widen merged three ways, "
        "and with --truth a perfect hand-kept list) and report recall@k, nDCG@10, MRR, exact-first and a paired "
        "randomisation test against the bag of words, by kind of query and by family.",
        epilog="examples:\n  widen evaluate --store build/store --postings build/demo/open_postings.jsonl "
        "--queries build/demo/queries.jsonl --truth build/demo/truth.json --out build/eval\n"
        "  widen evaluate --store build/store --postings build/demo/postings.jsonl --days 7,14,30,60 "
        "--queries build/demo/queries.jsonl --out build/eval",
    )
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--postings", type=Path, required=True, help="the dump the index is built from")
    p.add_argument("--queries", type=Path, required=True, help="labelled queries, JSON Lines")
    p.add_argument("--out", type=Path, required=True, help="folder for report.json, report.md, runs, plots")
    p.add_argument("--k", default="10,100", help="recall cut-offs, comma separated (default 10,100)")
    p.add_argument(
        "--truth",
        type=Path,
        help="the board's job families: adds a perfect hand-kept list of each job's titles to compare",
    )
    p.add_argument(
        "--days",
        help="index only the postings of the dump's last N days; several (7,14,30,60) draw the window curve",
    )
    p.add_argument(
        "--rm3",
        default="10,10,0.5",
        metavar="DOCS,TERMS,WEIGHT",
        help="RM3's feedback postings, terms and original-query weight (default 10,10,0.5)",
    )
    p.set_defaults(handler=evaluating.evaluate)

    p = sub.add_parser(
        "decide",
        help="record a reviewer decision: block, pin, exempt, or withdraw one",
        formatter_class=_FORMAT,
        description="Decisions apply at query time at once, without a retrain, and survive retrains.",
        epilog="examples:\n"
        "  widen decide block 'staff nurse' 'care' --store build/store --reviewer ana --note 'not a job title'\n"
        "  widen decide pin 'rn' 'staff nurse' --weight 0.45 --store build/store --reviewer ana\n"
        "  widen decide exempt 'hensby' --store build/store --reviewer ana\n"
        "  widen decide withdraw 3 --store build/store --reviewer ana",
    )
    p.add_argument("action", choices=["block", "pin", "exempt", "withdraw"])
    p.add_argument("target", help="the phrase (for withdraw: the decision id)")
    p.add_argument("neighbour", nargs="?", help="the neighbour phrase (block and pin)")
    p.add_argument("--store", type=Path, required=True)
    _decisions_url(p)
    p.add_argument("--reviewer", required=True, help="who decides (recorded)")
    p.add_argument("--note", help="why (recorded)")
    p.add_argument("--weight", type=float, help="pin: the boost, above 0 and below 1")
    p.set_defaults(handler=reviewing.decide)

    p = sub.add_parser(
        "decisions",
        help="list, export or import the reviewer decisions of a store",
        formatter_class=_FORMAT,
        epilog="examples:\n  widen decisions --store build/store\n  widen decisions --store build/store --json\n"
        "  widen decisions --store build/store --export decisions.json\n"
        "  widen decisions --store /srv/widen/store --import decisions.json --reviewer ana",
    )
    p.add_argument("--store", type=Path, required=True)
    _decisions_url(p)
    p.add_argument(
        "--migrate", action="store_true", help="create or migrate the decisions database's schema, then stop"
    )
    p.add_argument("--json", action="store_true")
    p.add_argument("--all", action="store_true", help="include withdrawn decisions")
    p.add_argument("--export", type=Path, metavar="FILE", help="write the active decisions as JSON")
    p.add_argument(
        "--history",
        action="store_true",
        help="with --export: also every withdrawn decision and the audit trail (to move a whole database)",
    )
    p.add_argument("--import", dest="import_file", type=Path, metavar="FILE", help="add the decisions of an export")
    p.add_argument("--reviewer", help="with --import: who imports (recorded)")
    p.set_defaults(handler=reviewing.decisions)

    p = sub.add_parser(
        "worklist",
        help="after a retrain: the phrases seekers type whose expansions need a look, busiest first",
        formatter_class=_FORMAT,
        description='Reads the day\'s query log (JSON Lines: one search a line {"q", "at"}, or counts '
        '{"q", "searches"}; plain or gzip) and lists each phrase flagged: changed against the bundle '
        "before, unsure, coded wording, finding little, or a stale decision (docs/review.md).",
        epilog="examples:\n"
        "  widen worklist --store build/store --log build/demo/query_log.jsonl\n"
        "  widen worklist --store build/store --log log.jsonl.gz --reason coded --json\n"
        "  widen worklist --store build/store --log log.jsonl --summary >> train.log\n"
        "  widen worklist --store build/store --log log.jsonl --mark-looked unsure --reviewer ana\n"
        "  widen worklist --store build/store --log log.jsonl --block-everywhere 'ward sister' --reviewer ana\n"
        "  widen worklist --store build/store --withdraw-batch 3f9a01c2 --reviewer ana",
    )
    p.add_argument("--store", type=Path, required=True)
    _decisions_url(p)
    p.add_argument("--log", type=Path, help="the day's query log")
    p.add_argument("--days", type=float, help="days the log covers (default: from its dates, or 1)")
    p.add_argument("--bundle", help="the bundle to review (default: the one serving)")
    p.add_argument("--against", help="the bundle before (default: the one that served before it)")
    p.add_argument("--postings", type=Path, help="open postings: count what a change adds to the first 100 results")
    p.add_argument("--coded", type=Path, help="the board's own coded titles, one a line, on top of the lists")
    p.add_argument("--reason", help="only items with this reason: " + ", ".join(worklist.REASONS))
    p.add_argument("--limit", type=int, default=50, help="items shown (default 50)")
    p.add_argument("--json", action="store_true")
    p.add_argument("--summary", action="store_true", help="one line, for the nightly log")
    p.add_argument("--mark-looked", metavar="REASON", help="mark every item of a reason (or 'all') looked at")
    p.add_argument("--block-everywhere", metavar="NEIGHBOUR", help="block it for every phrase that offers it")
    p.add_argument("--withdraw-batch", metavar="BATCH", help="withdraw every decision of a batch")
    p.add_argument("--reviewer", help="who decides (recorded)")
    p.add_argument("--note", help="why (recorded)")
    p.set_defaults(handler=worklist.worklist)
    return parser


def _decisions_url(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--decisions-url",
        default=os.environ.get("WIDEN_DECISIONS_URL") or None,
        metavar="URL",
        help="a postgresql:// database shared by replicas (default: $WIDEN_DECISIONS_URL, else the store's SQLite)",
    )
