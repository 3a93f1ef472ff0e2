"""The one error hierarchy of widen; each kind of error carries the exit code the command line returns.

Exit codes (the nightly job relies on them): 0 done (for train: published), 1 failure,
2 bad input (corpus, config, arguments, a decision), 3 refused by the gate.
"""

from __future__ import annotations

__all__ = [
    "EXIT_OK",
    "EXIT_FAILURE",
    "EXIT_BAD_INPUT",
    "EXIT_REFUSED",
    "WidenError",
    "BadInput",
    "ConfigError",
    "PairsError",
    "BundleError",
    "StoreBusy",
    "DecisionError",
    "DecisionMissing",
    "DecisionWithdrawn",
    "DecisionsUnavailable",
]

EXIT_OK, EXIT_FAILURE, EXIT_BAD_INPUT, EXIT_REFUSED = 0, 1, 2, 3


class WidenError(Exception):
    """Anything widen reports to a person; the message says what is wrong and, where it can, what to do."""

    exit_code = EXIT_FAILURE


class BadInput(WidenError, ValueError):
    """Input that cannot be used (a dump, a file, an argument); nothing was changed."""

    exit_code = EXIT_BAD_INPUT


class ConfigError(BadInput):
    """A config file that cannot be used; the message names the key."""


class PairsError(BadInput):
    """The gate's pairs file cannot be read; the message says where."""


class BundleError(WidenError, RuntimeError):
    """A bundle is missing, incomplete or fails verification."""


class StoreBusy(WidenError, RuntimeError):
    """Another process holds the store's lock."""


class DecisionError(BadInput):
    """A reviewer decision that cannot be recorded; the message says why."""


class DecisionMissing(DecisionError):
    """No decision has that id."""


class DecisionWithdrawn(DecisionError):
    """The decision was already withdrawn."""


class DecisionsUnavailable(WidenError, RuntimeError):
    """The decisions database cannot be reached just now; nothing was written."""
