"""`widen train`: learn a bundle from a dump and publish it when the gate passes."""

from __future__ import annotations

import argparse
import sys

from widen.errors import EXIT_OK, BadInput

__all__ = ["train"]


def train(args: argparse.Namespace) -> int:
    from training.config import load_config
    from training.pipeline import summary
    from training.pipeline import train as train_bundle

    overrides = {"gate.pairs": str(args.pairs.resolve())} if args.pairs else None
    config = load_config(args.config, overrides)
    if args.print_config:
        sys.stdout.write(config.to_toml())
        return EXIT_OK
    if args.corpus is None or args.store is None:
        raise BadInput("train needs --corpus and --store (or --print-config)")
    outcome = train_bundle(args.corpus, args.store, config, force=args.force)
    print(summary(outcome))
    if not outcome.promoted:
        print(f"\nthe gate refused {outcome.version}; it is kept as rejected and the serving bundle is unchanged.")
        print(f"to serve it anyway: widen promote {outcome.version} --store {args.store} --force")
    return outcome.exit_code
