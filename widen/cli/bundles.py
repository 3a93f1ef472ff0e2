"""`widen bundles`, `promote` and `rollback`: what is in a store and which bundle serves."""

from __future__ import annotations

import argparse
import json

from widen.cli.tables import table
from widen.errors import EXIT_OK, BadInput, BundleError
from widen.model.store import Store

__all__ = ["bundles", "promote", "rollback"]


def bundles(args: argparse.Namespace) -> int:
    infos = Store(args.store).listing()
    if args.json:
        print(json.dumps([i.as_dict() for i in infos], indent=2))
        return EXIT_OK
    if not infos:
        print(f"no bundles in {args.store}")
        return EXIT_OK
    header = ("version", "status", "created_at", "gate", "forced", "concepts")
    rows = [
        (
            i.version,
            i.status,
            i.created_at,
            "n/a" if i.gate_score is None else f"{i.gate_score:.3f}",
            "yes" if i.forced else "",
            i.concept_lineage or "none",
        )
        for i in infos
    ]
    print(table([header, *rows]))
    return EXIT_OK


def _promote_version(store: Store, version: str, force: bool, by: str) -> int:
    problems = store.verify(version)
    if problems:
        raise BundleError("; ".join(problems))
    gate = store.manifest(version).gate
    passed = gate is not None and gate.passed
    if not passed and not force:
        reasons = "; ".join(gate.reasons) if gate is not None else "no gate result"
        raise BadInput(f"{version} was refused by the gate ({reasons}); add --force")
    with store.locked():
        store.set_current(version, by=by, forced=not passed)
    print(f"now serving {version}")
    return EXIT_OK


def promote(args: argparse.Namespace) -> int:
    return _promote_version(Store(args.store), args.version, args.force, by="promote")


def rollback(args: argparse.Namespace) -> int:
    store = Store(args.store)
    target = store.rollback_target()
    if target is None:
        raise BadInput(f"no earlier bundle to roll back to in {args.store}")
    return _promote_version(store, target, force=True, by="rollback")
