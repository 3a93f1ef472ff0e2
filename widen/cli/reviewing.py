"""`widen decide` and `widen decisions`: record, withdraw, list, export and import reviewer decisions."""

from __future__ import annotations

import argparse
import json

from widen.cli.tables import table
from widen.decisions.open_store import open_decision_store
from widen.errors import EXIT_OK, BadInput, DecisionError
from widen.model.store import Store

__all__ = ["decide", "decisions"]


def decide(args: argparse.Namespace) -> int:
    store = open_decision_store(Store(args.store), args.decisions_url)
    if args.action == "withdraw":
        if not args.target.isdigit():
            raise BadInput("withdraw takes a decision id (see widen decisions)")
        d = store.withdraw(int(args.target), args.reviewer, args.note)
        print(f"withdrew decision {d.id}: {d.action} {d.phrase}" + (f" -> {d.neighbour}" if d.neighbour else ""))
        return EXIT_OK
    d = store.add(args.target, args.action, args.reviewer, args.neighbour, args.weight, args.note)
    print(f"decision {d.id}: {d.action} {d.phrase}" + (f" -> {d.neighbour}" if d.neighbour else ""))
    return EXIT_OK


def decisions(args: argparse.Namespace) -> int:
    store = open_decision_store(Store(args.store), args.decisions_url)
    if args.migrate:
        migrate = getattr(store, "migrate", None)
        print(f"decisions schema at version {migrate()}" if migrate else "the store's SQLite migrates itself")
        return EXIT_OK
    if args.import_file:
        if not args.reviewer:
            raise BadInput("--import needs --reviewer")
        try:
            data = json.loads(args.import_file.read_text(encoding="utf-8"))
            added = store.import_(data, args.reviewer)
        except (OSError, json.JSONDecodeError, DecisionError) as exc:
            raise BadInput(f"cannot import {args.import_file}: {exc}") from exc
        print(f"imported {added} decision(s)")
        return EXIT_OK
    if args.export:
        exported = store.export(history=args.history)
        args.export.write_text(json.dumps(exported, indent=2, ensure_ascii=False) + "\n", encoding="utf-8")
        print(f"wrote {len(store.entries())} decision(s) to {args.export}")
        return EXIT_OK
    listed = store.entries(include_withdrawn=args.all)
    if args.json:
        print(json.dumps([d.as_dict() for d in listed], indent=2, ensure_ascii=False))
        return EXIT_OK
    if not listed:
        print("no decisions")
        return EXIT_OK
    rows = [("id", "action", "phrase", "neighbour", "weight", "reviewer", "when", "note")]
    for d in listed:
        when = d.created_at + (f" (withdrawn {d.withdrawn_at} by {d.withdrawn_by})" if d.withdrawn_at else "")
        weight = "" if d.weight is None else f"{d.weight:.2f}"
        rows.append((str(d.id), d.action, d.phrase, d.neighbour or "", weight, d.reviewer, when, d.note or ""))
    print(table(rows))
    return EXIT_OK
