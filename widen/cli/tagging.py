"""`widen tag`: each posting of a dump with its concept tokens, for the board's index (JSON Lines out).

Streamed: the dump is read once, in batches, and the output written as it goes, to a `.partial` file
renamed into place at the end, so a file that exists is complete. Records the reader cannot use are
skipped and counted by reason, as `widen train` skips them.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from typing import IO

from training.config import CorpusSection
from training.corpus import Posting, PostingCorpus
from training.progress import Progress
from widen.errors import EXIT_OK, BadInput
from widen.expansion.lexicon import Lexicon
from widen.model.store import Store

__all__ = ["tag", "BATCH"]

#: Postings tagged in one vectorised step.
BATCH = 2048


def _write(lexicon: Lexicon, batch: list[Posting], field: str, out: IO[str]) -> None:
    pairs = [(p.texts[0], " ".join(p.texts[1:])) if p.texts else ("", "") for p in batch]
    for posting, tokens in zip(batch, lexicon.tag(pairs), strict=True):
        out.write(json.dumps({"id": posting.id, field: " ".join(tokens)}, ensure_ascii=False) + "\n")


def tag(args: argparse.Namespace) -> int:
    store = Store(args.store)
    lexicon = Lexicon(store.open_bundle(args.bundle))
    concepts = lexicon.concepts
    if concepts is None:
        raise BadInput(f"bundle {lexicon.version} has no concepts (trained with concepts.enabled = false, or before)")
    if not args.corpus.is_file():
        raise BadInput(f"corpus not found: {args.corpus}")
    corpus = PostingCorpus(args.corpus, CorpusSection(fields=["title", "description"], protected_fields=[]))
    field = lexicon.options.concept_field
    partial = args.out.with_name(args.out.name + ".partial") if args.out else None
    out = partial.open("w", encoding="utf-8") if partial else sys.stdout
    tagged = 0
    try:
        with Progress("tag", unit="postings", stream=sys.stderr) as bar:
            batch: list[Posting] = []
            for posting in corpus:
                batch.append(posting)
                if len(batch) >= BATCH:
                    _write(lexicon, batch, field, out)
                    tagged, batch = tagged + len(batch), []
                    bar.update(BATCH)
            _write(lexicon, batch, field, out)
            tagged += len(batch)
            bar.update(len(batch))
    except BaseException:
        if partial:
            out.close()
            partial.unlink(missing_ok=True)
        raise
    if partial and args.out:
        out.flush()
        os.fsync(out.fileno())
        out.close()
        partial.replace(args.out)
    skipped = ", ".join(f"{r} {n}" for r, n in sorted(corpus.stats.skipped.items())) or "none"
    print(
        f"tagged {tagged} postings with bundle {lexicon.version} (concept lineage {concepts.lineage}, "
        f"field '{field}', sizes {', '.join(map(str, concepts.sizes))}); skipped: {skipped}",
        file=sys.stderr,
    )
    return EXIT_OK
