"""The `widen` command: one entry point, one subcommand per job, the only place that ties the
core (`widen`), the nightly job (`training`) and the HTTP service (`service`) together.

Exit codes (the nightly job relies on them): 0 done (for train: published), 1 failure,
2 bad input (corpus, config, arguments, a decision), 3 refused by the gate.
"""

from __future__ import annotations

import logging
import sys
from collections.abc import Sequence

from widen.cli.parser import build_parser
from widen.errors import EXIT_FAILURE, WidenError

__all__ = ["main"]


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    logging.basicConfig(
        level=logging.INFO if args.verbose else logging.WARNING, format="%(levelname)s %(name)s: %(message)s"
    )
    if not args.verbose:
        logging.getLogger("gensim").setLevel(logging.WARNING)
    try:
        return int(args.handler(args))
    except WidenError as exc:
        print(f"widen: {exc}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print("widen: interrupted; the serving bundle is unchanged", file=sys.stderr)
        return EXIT_FAILURE
