"""`widen worklist`: after a retrain, the phrases seekers type whose expansions need a reviewer's look.

Prints the list (a table, or `--json`), or one summary line for the nightly log (`--summary`), and
does the bulk decisions that are safe: mark a whole reason group looked at, block one neighbour
across every phrase that offers it (one batch), withdraw such a batch.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from widen.cli.tables import table
from widen.decisions.backend import DecisionStore
from widen.decisions.open_store import open_decision_store
from widen.errors import EXIT_OK, BadInput
from widen.evaluation.index import SearchIndex
from widen.expansion.cache import ExpansionCache
from widen.expansion.lexicon import Lexicon
from widen.model.store import Store
from widen.worklist.build import Bundle, build_worklist
from widen.worklist.bulk import block_everywhere, mark_looked
from widen.worklist.coded import CodedCheck
from widen.worklist.items import REASONS, Worklist
from widen.worklist.querylog import read_query_log

__all__ = ["worklist", "coded_check", "REASONS"]


def coded_check(path: Path | None) -> CodedCheck:
    """The coded-wording check, with the board's own list (one title or word a line) when given."""
    if path is None:
        return CodedCheck()
    if not path.is_file():
        raise BadInput(f"coded titles file not found: {path}")
    return CodedCheck(line for line in path.read_text(encoding="utf-8").splitlines() if not line.startswith("#"))


def _bundle(store: Store, version: str) -> Bundle:
    lexicon = Lexicon(store.open_bundle(version))
    return Bundle(lexicon, ExpansionCache(lexicon))


def _built(args: argparse.Namespace, store: Store, decisions: DecisionStore) -> Worklist:
    version = args.bundle or store.current_version()
    if version is None:
        raise BadInput(f"the store {store.root} has no current bundle")
    against = args.against or store.rollback_target()
    now = _bundle(store, version)
    before = _bundle(store, against) if against and against != version else None
    index = SearchIndex(args.postings, store.root / "search-index") if args.postings else None
    log = read_query_log(args.log, args.days)
    return build_worklist(
        now, before, decisions.entries(), log, now.lexicon.options, index=index, coded=coded_check(args.coded)
    )


def _print(listed: Worklist, args: argparse.Namespace) -> None:
    items = listed.chosen(args.reason or "")[: args.limit]
    if args.json:
        print(json.dumps(listed.as_dict(items), indent=2))
        return
    print(listed.summary())
    rows = [("phrase", "searches a day", "reasons", "why", "postings +/-", "looked at")]
    for i in items:
        moved = "" if i.postings_added is None else f"+{i.postings_added} / -{i.postings_removed}"
        why = "; ".join(i.notes[:3]) + (f" (and {len(i.notes) - 3} more)" if len(i.notes) > 3 else "")
        rows.append((i.phrase, f"{i.searches:.1f}", ", ".join(i.reasons), why[:120], moved, i.looked_by or ""))
    print(table(rows))


def worklist(args: argparse.Namespace) -> int:
    store = Store(args.store)
    decisions = open_decision_store(store, args.decisions_url)
    if args.reason and args.reason not in REASONS:
        raise BadInput(f"--reason must be one of {', '.join(REASONS)}")
    if args.withdraw_batch:
        _need_reviewer(args)
        gone = decisions.withdraw_batch(args.withdraw_batch, args.reviewer, args.note)
        print(f"withdrew {len(gone)} decisions of batch {args.withdraw_batch}")
        return EXIT_OK
    if args.log is None:
        raise BadInput("--log is needed: the day's query log")
    listed = _built(args, store, decisions)
    if args.mark_looked:
        _need_reviewer(args)
        group = listed.chosen("" if args.mark_looked == "all" else args.mark_looked)
        made = mark_looked(decisions, group, listed.version, args.reviewer, args.note)
        print(f"marked {len(made)} items looked at in {listed.version}")
        return EXIT_OK
    if args.block_everywhere:
        _need_reviewer(args)
        now = _bundle(store, listed.version)
        batch, made = block_everywhere(decisions, now, listed, args.block_everywhere, args.reviewer, args.note)
        print(
            f"batch {batch}: blocked '{args.block_everywhere}' for {len(made)} phrases: "
            + ", ".join(d.phrase for d in made)
        )
        return EXIT_OK
    if args.summary:
        print(listed.summary())
    else:
        _print(listed, args)
    print(f"built in {listed.seconds:.1f} s from {listed.queries} distinct logged queries", file=sys.stderr)
    return EXIT_OK


def _need_reviewer(args: argparse.Namespace) -> None:
    if not args.reviewer:
        raise BadInput("this change needs --reviewer (recorded)")
