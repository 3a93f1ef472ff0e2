"""The `widen` command: one entry point, one subcommand per job.

Exit codes (the nightly job relies on them): 0 done (for train: published),
1 failure, 2 bad input (corpus, config or arguments), 3 refused by the gate.
"""

from __future__ import annotations

import argparse
import json
import logging
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from training.bundle import BundleError, Store, StoreBusy
from training.config import ConfigError, load_config
from training.pipeline import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_OK, BadInput, summary, train

__all__ = ["main"]

Handler = Callable[[argparse.Namespace], int]


class _Formatter(argparse.RawDescriptionHelpFormatter):
    pass


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="widen",
        description="Query expansion for job-posting search: learn neighbour phrases from your postings "
        "and turn a seeker's phrase into boosted query fragments.",
        formatter_class=_Formatter,
        epilog="examples:\n  widen train --corpus build/demo/postings.jsonl --store build/store\n"
        "  widen bundles --store build/store\n",
    )
    parser.add_argument("-v", "--verbose", action="store_true", help="log library messages too")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    p = sub.add_parser(
        "train",
        help="learn a bundle from a postings dump and publish it if the gate passes",
        formatter_class=_Formatter,
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
    p.set_defaults(handler=_train)

    p = sub.add_parser(
        "bundles",
        help="list the bundles of a store with status and gate score",
        formatter_class=_Formatter,
        epilog="examples:\n  widen bundles --store build/store\n  widen bundles --store build/store --json",
    )
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--json", action="store_true", help="JSON output")
    p.set_defaults(handler=_bundles)

    p = sub.add_parser(
        "promote",
        help="make a bundle the serving one",
        formatter_class=_Formatter,
        epilog="examples:\n  widen promote 20261130T021500123456Z-3f2a1c9d --store build/store\n"
        "  widen promote 20261130T021500123456Z-3f2a1c9d --store build/store --force  # a rejected one",
    )
    p.add_argument("version")
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--force", action="store_true", help="allow a bundle that the gate refused")
    p.set_defaults(handler=_promote)

    p = sub.add_parser(
        "rollback",
        help="return to the bundle that served before the current one",
        formatter_class=_Formatter,
        epilog="examples:\n  widen rollback --store build/store",
    )
    p.add_argument("--store", type=Path, required=True)
    p.set_defaults(handler=_rollback)
    return parser


def _train(args: argparse.Namespace) -> int:
    overrides = {"gate.pairs": str(args.pairs.resolve())} if args.pairs else None
    config = load_config(args.config, overrides)
    if args.print_config:
        sys.stdout.write(config.to_toml())
        return EXIT_OK
    if args.corpus is None or args.store is None:
        raise BadInput("train needs --corpus and --store (or --print-config)")
    outcome = train(args.corpus, args.store, config, force=args.force)
    print(summary(outcome))
    if not outcome.promoted:
        print(f"\nthe gate refused {outcome.version}; it is kept as rejected and the serving bundle is unchanged.")
        print(f"to serve it anyway: widen promote {outcome.version} --store {args.store} --force")
    return outcome.exit_code


def _bundles(args: argparse.Namespace) -> int:
    infos = Store(args.store).listing()
    if args.json:
        print(json.dumps([i.as_dict() for i in infos], indent=2))
        return EXIT_OK
    if not infos:
        print(f"no bundles in {args.store}")
        return EXIT_OK
    header = ("version", "status", "created_at", "gate", "forced")
    rows = [
        (
            i.version,
            i.status,
            i.created_at,
            "n/a" if i.gate_score is None else f"{i.gate_score:.3f}",
            "yes" if i.forced else "",
        )
        for i in infos
    ]
    widths = [max(len(r[c]) for r in [header, *rows]) for c in range(len(header))]
    for row in [header, *rows]:
        print("  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip())
    return EXIT_OK


def _promote_version(store: Store, version: str, force: bool, by: str) -> int:
    problems = store.verify(version)
    if problems:
        raise BundleError("; ".join(problems))
    gate = store.manifest(version).get("gate") or {}
    if not gate.get("passed") and not force:
        raise BadInput(f"{version} was refused by the gate ({'; '.join(gate.get('reasons', []))}); add --force")
    with store.locked():
        store.set_current(version, by=by, forced=not gate.get("passed"))
    print(f"now serving {version}")
    return EXIT_OK


def _promote(args: argparse.Namespace) -> int:
    return _promote_version(Store(args.store), args.version, args.force, by="promote")


def _rollback(args: argparse.Namespace) -> int:
    store = Store(args.store)
    target = store.rollback_target()
    if target is None:
        raise BadInput(f"no earlier bundle to roll back to in {args.store}")
    return _promote_version(store, target, force=True, by="rollback")


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    logging.basicConfig(
        level=logging.INFO if args.verbose else logging.WARNING, format="%(levelname)s %(name)s: %(message)s"
    )
    if not args.verbose:
        logging.getLogger("gensim").setLevel(logging.WARNING)
    try:
        return int(args.handler(args))
    except (BadInput, ConfigError) as exc:
        print(f"widen: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except (BundleError, StoreBusy) as exc:
        print(f"widen: {exc}", file=sys.stderr)
        return EXIT_FAILURE
    except KeyboardInterrupt:
        print("widen: interrupted; the serving bundle is unchanged", file=sys.stderr)
        return EXIT_FAILURE


if __name__ == "__main__":
    sys.exit(main())
