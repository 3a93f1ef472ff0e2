"""Decisions in bulk where it is safe: a reason group marked looked at, and one neighbour blocked across
every phrase that offers it, recorded as one batch that one withdrawal undoes."""

from __future__ import annotations

import secrets

from widen.decisions.backend import DecisionStore
from widen.decisions.decision import Decision, DecisionSet
from widen.errors import DecisionError
from widen.text.forms import phrase_of_key, phrase_of_text
from widen.worklist.build import Bundle, served
from widen.worklist.items import Item, Worklist

__all__ = ["mark_looked", "block_everywhere", "offering", "batch_note"]


def batch_note(batch: str, note: str | None, what: str) -> str:
    """The note every decision of a batch carries: `[batch ID]` first, so the batch can be withdrawn."""
    return f"[batch {batch}] {what}" + (f": {note}" if note else "")


def mark_looked(
    store: DecisionStore, items: list[Item], version: str, reviewer: str, note: str | None
) -> list[Decision]:
    """Each item not yet looked at in bundle `version` marked looked at, in one transaction."""
    fresh = [i for i in items if i.looked_by is None]
    return store.add_many([(i.phrase, "looked", version, None) for i in fresh], reviewer, note)


def offering(bundle: Bundle, decisions: DecisionSet, phrases: list[str], neighbour: str) -> list[str]:
    """The phrases among `phrases` whose served expansions (typed alone) include `neighbour`."""
    options = bundle.lexicon.options
    return [p for p in phrases if p != neighbour and neighbour in served(bundle, decisions, p, options)]


def block_everywhere(
    store: DecisionStore, bundle: Bundle, listed: Worklist, neighbour: str, reviewer: str, note: str | None
) -> tuple[str, list[Decision]]:
    """Block `neighbour` for every phrase that offers it (the logged phrases and every entry of the bundle
    typed alone), as one batch: (batch id, the decisions). DecisionError when no phrase offers it."""
    target = phrase_of_text(neighbour)
    active = store.entries()
    decisions = DecisionSet.from_decisions(0, active)
    phrases = sorted(set(listed.queries_of) | {phrase_of_key(k) for k in bundle.lexicon.keys})
    chosen = offering(bundle, decisions, phrases, target)
    if not chosen:
        raise DecisionError(f"no phrase is offered '{target}' now: nothing to block")
    batch = secrets.token_hex(4)
    what = f"block '{target}' wherever it is offered ({len(chosen)} phrases)"
    made = store.add_many([(p, "block", target, None) for p in chosen], reviewer, batch_note(batch, note, what))
    return batch, made
