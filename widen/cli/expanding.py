"""`widen expand`: what a query becomes now, with the serving bundle and the decisions in force."""

from __future__ import annotations

import argparse

from pydantic import ValidationError

from widen.cli.tables import render_expansion
from widen.decisions.open_store import open_decision_store
from widen.errors import EXIT_OK, BadInput
from widen.expansion.expand import expand as expand_query
from widen.expansion.lexicon import Lexicon
from widen.model.store import Store

__all__ = ["expand"]


def expand(args: argparse.Namespace) -> int:
    store = Store(args.store)
    lexicon = Lexicon(store.open_bundle(args.bundle))
    try:
        options = lexicon.options.with_request(
            max=args.max,
            min_similarity=args.min_similarity,
            strict=True if args.strict else None,
            places=args.places,
            match=args.match,
            concepts=True if args.concepts else None,
        )
    except ValidationError as exc:
        raise BadInput(str(exc.errors()[0]["msg"]) + f" ({exc.errors()[0]['loc'][0]})") from exc
    decisions = open_decision_store(store, args.decisions_url).snapshot()
    result = expand_query(lexicon, decisions, args.query, options, explain=args.explain)
    if args.json:
        print(result.model_dump_json(indent=2, exclude_none=True))
        return EXIT_OK
    print(render_expansion(result))
    return EXIT_OK
