"""Reviewer decisions: block or pin a neighbour for a phrase, or exempt a phrase from expansion.

Decisions live in the store's decisions database (not in a bundle), so they apply at query
time without a retrain and survive retrains. A withdrawal never deletes: the decision stops
applying and every change stays in the audit trail. The expansion core sees only an immutable
`DecisionSet` snapshot; where the decisions are kept is a `DecisionStore`
(`widen.decisions.backend`), an interface with one backend per database.

The actions are named for what the reviewer does: *block* one neighbour of a phrase, *pin* one
neighbour (with a weight) to a phrase, *exempt* a phrase from expansion altogether, and
*withdraw* a decision; and *looked*, a worklist item looked at in one bundle, which changes nothing
but is kept, with its reviewer and time, as a decision is.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any, Literal

from widen.errors import DecisionError
from widen.text.forms import phrase_of_text

__all__ = [
    "Action",
    "ACTIONS",
    "APPLIED",
    "Decision",
    "DecisionSet",
    "PhraseDecisions",
    "checked_decision",
    "EXPORT_FORMAT",
    "MAX_ID",
]

Action = Literal["block", "pin", "exempt", "looked"]
ACTIONS: tuple[str, ...] = ("block", "pin", "exempt", "looked")
#: The actions that change what widen does; `looked` only records that a reviewer looked at a phrase's
#: worklist item in a bundle (the neighbour field holds the bundle's version), and changes nothing.
APPLIED: tuple[str, ...] = ("block", "pin", "exempt")
#: Decision ids are 64-bit signed integers in every backend.
MAX_ID = 2**63 - 1
EXPORT_FORMAT = "widen-decisions"
#: Version 2 names the phrase-wide action `exempt`; version 1 exports called it `never`.
EXPORT_VERSION = 2
_RENAMED = {"never": "exempt"}


@dataclass(frozen=True)
class Decision:
    id: int
    phrase: str
    neighbour: str | None
    action: str
    weight: float | None
    reviewer: str
    note: str | None
    created_at: str
    withdrawn_at: str | None = None
    withdrawn_by: str | None = None

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass(frozen=True)
class PhraseDecisions:
    blocked: frozenset[str] = frozenset()
    pinned: tuple[tuple[str, float], ...] = ()
    exempt: bool = False


_NONE = PhraseDecisions()


@dataclass(frozen=True)
class DecisionSet:
    """What the active decisions say, by phrase; `version` changes whenever they do."""

    version: int = 0
    by_phrase: dict[str, PhraseDecisions] = field(default_factory=dict)

    def get(self, phrase: str) -> PhraseDecisions:
        return self.by_phrase.get(phrase, _NONE)

    @classmethod
    def from_decisions(cls, version: int, decisions: list[Decision]) -> DecisionSet:
        blocked: dict[str, set[str]] = {}
        pinned: dict[str, dict[str, float]] = {}
        exempt: set[str] = set()
        for d in decisions:
            if d.action == "exempt":
                exempt.add(d.phrase)
            elif d.action == "block" and d.neighbour:
                blocked.setdefault(d.phrase, set()).add(d.neighbour)
            elif d.action == "pin" and d.neighbour and d.weight is not None:
                pinned.setdefault(d.phrase, {})[d.neighbour] = d.weight  # the newest pin wins
        phrases = set(blocked) | set(pinned) | exempt
        by_phrase = {
            p: PhraseDecisions(
                frozenset(blocked.get(p, ())),
                tuple(sorted(pinned.get(p, {}).items(), key=lambda kv: (-kv[1], kv[0]))),
                p in exempt,
            )
            for p in phrases
        }
        return cls(version, by_phrase)


def checked_decision(
    phrase: str, action: str, reviewer: str, neighbour: str | None, weight: float | None
) -> tuple[str, str | None, str]:
    """A decision's phrase, neighbour (as phrases) and reviewer, or DecisionError saying what is wrong."""
    phrase_key = phrase_of_text(phrase)
    neighbour_key = phrase_of_text(neighbour) if neighbour and action != "looked" else None
    if action == "looked":  # the bundle's version, as it is written
        neighbour_key = neighbour.strip() if neighbour and neighbour.strip().isprintable() else None
    if action not in ACTIONS:
        raise DecisionError(f"action must be one of {', '.join(ACTIONS)}, not {action!r}")
    if not phrase_key:
        raise DecisionError("phrase has no words")
    if not reviewer.strip():
        raise DecisionError("reviewer is required")
    if action == "looked" and not neighbour_key:
        raise DecisionError("looked needs the bundle's version it was looked at in")
    if action in ("block", "pin") and not neighbour_key:
        raise DecisionError(f"{action} needs a neighbour")
    if action == "exempt" and neighbour_key:
        raise DecisionError("exempt applies to a whole phrase; leave the neighbour out")
    if action == "pin":
        if not isinstance(weight, (int, float)) or isinstance(weight, bool) or not 0.0 < weight < 1.0:
            raise DecisionError("pin needs a weight between 0 and 1 (the original always weighs 1)")
    elif weight is not None:
        raise DecisionError(f"{action} takes no weight")
    if neighbour_key == phrase_key:
        raise DecisionError("a phrase cannot be its own neighbour")
    return phrase_key, neighbour_key, reviewer.strip()
