"""`widen serve`: hand the process to the HTTP service (the `service` package)."""

from __future__ import annotations

import argparse

__all__ = ["serve"]


def serve(args: argparse.Namespace) -> int:
    from service.launch import serve as launch

    return launch(store=args.store, host=args.host, port=args.port, workers=args.workers, demo_index=args.demo_index)
