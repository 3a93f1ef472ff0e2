"""The last pass over the scratch corpus, once the phrase passes are learned.

It applies the last phrase pass and the title pass and writes the two files the rest of the run
reads: one line a block for skip-gram (its windows span the sentences of a paragraph or list item;
numbers and lone letters left out), and one line a posting of its title entries and description
entries, for the duties. It then gives back to single words the occurrences phrases took where a
word would otherwise go without a vector.
"""

from __future__ import annotations

import functools
import itertools
import multiprocessing
import os
import shutil
from collections import Counter
from pathlib import Path
from typing import NamedTuple

from training.first_pass import Scratch
from widen.model.phrases import Phraser
from widen.text.forms import PHRASE_JOINER
from widen.text.tokenize import in_windows

__all__ = ["final_pass", "keep_words"]


def final_pass(
    phraser: Phraser, scratch: Scratch, phrased: Path, postings: Path, names: Path | None = None, workers: int = 1
) -> tuple[Counter[str], Counter[str]]:
    """Apply the last phrase pass and the title pass; write one line a block for skip-gram, whose
    windows then span the sentences of a paragraph or list item (numbers and lone letters left out),
    and one line a posting of its title entries, description entries and the titles it names (read
    from `names`, one line a posting in the scratch corpus's order), for the duties. Returns the
    count of every entry written for skip-gram, and of the entries used in titles.

    With `workers` above 1 the scratch corpus is cut at posting starts into that many parts, each
    worked in a process of its own (this one and forked ones) and the parts' files joined in order:
    the files and counts are the same as one process makes (a Counter merged part after part keeps
    the order in which entries were first met)."""
    passes = phraser.passes[-1:] if scratch.generation < len(phraser.passes) else []
    last = Phraser(passes, phraser.titles)
    parts = _parts(scratch.path, max(workers, 1))
    if len(parts) == 1:
        return _final_part(last, scratch.path, parts[0], names, phrased, postings)
    outs = [
        (phrased.with_name(f"{phrased.name}.{n}"), postings.with_name(f"{postings.name}.{n}"))
        for n in range(len(parts))
    ]
    with multiprocessing.get_context("fork").Pool(len(parts) - 1) as pool:
        pending = [
            pool.apply_async(_final_part, (last, scratch.path, part, names, *out))
            for part, out in zip(parts[1:], outs[1:], strict=True)
        ]
        done = [_final_part(last, scratch.path, parts[0], names, *outs[0])] + [p.get() for p in pending]
    for target, pieces in ((phrased, [o[0] for o in outs]), (postings, [o[1] for o in outs])):
        with target.open("wb") as dst:
            for piece in pieces:
                with piece.open("rb") as src:
                    shutil.copyfileobj(src, dst, 1 << 20)
                piece.unlink()
    counts, in_titles = done[0]
    for more_counts, more_titles in done[1:]:
        counts.update(more_counts)
        in_titles.update(more_titles)
    return counts, in_titles


class _Part(NamedTuple):
    """A run of whole postings of the scratch corpus: its byte range, and how many postings come before."""

    start: int
    stop: int
    before: int


_POSTING = b"P\t\n"  # the line that starts a posting in the scratch corpus (`training.first_pass`)


def _parts(scratch: Path, count: int) -> list[_Part]:
    """Cut the scratch corpus into `count` runs of whole postings of about equal size (fewer when small)."""
    size = scratch.stat().st_size
    starts = [0]
    with scratch.open("rb") as fh:
        for n in range(1, count):
            fh.seek(max(size * n // count, starts[-1]))
            fh.readline()  # to the next line start
            while (line := fh.readline()) and line != _POSTING:
                pass
            if not line:
                break
            starts.append(fh.tell() - len(line))
        fh.seek(0)
        befores, seen, tail = [0], 1 if fh.read(len(_POSTING)) == _POSTING else 0, b""
        fh.seek(0)
        for start, stop in itertools.pairwise(starts):  # count the posting lines of each run
            left = stop - start
            while left:
                chunk = fh.read(min(left, 1 << 24))
                left -= len(chunk)
                seen += (tail + chunk).count(b"\n" + _POSTING)
                tail = chunk[-3:]
            befores.append(seen)
    ends = [*starts[1:], size]
    unique = [_Part(a, b, n) for a, b, n in zip(starts, ends, befores, strict=True) if b > a]
    return unique or [_Part(0, size, 0)]


def _final_part(
    last: Phraser, scratch: Path, part: _Part, names: Path | None, phrased: Path, postings: Path
) -> tuple[Counter[str], Counter[str]]:
    """One run of postings of the final pass (see `final_pass`), from its own byte range of the scratch."""
    counts: Counter[str] = Counter()
    in_titles: Counter[str] = Counter()
    window = functools.cache(in_windows)  # tens of thousands of entries, many millions of uses
    block: list[str] = []
    title: list[str] = []
    said: list[str] = []
    named: list[str] = [""]

    def posting_done() -> None:
        if title or said:
            out.write(" ".join(title) + "\t" + " ".join(said) + "\t" + named[0] + "\n")
        title.clear()
        said.clear()

    with (
        scratch.open("rb") as src,
        phrased.open("w", encoding="utf-8") as dst,
        postings.open("w", encoding="utf-8") as out,
        names.open(encoding="utf-8") if names is not None else open(os.devnull, encoding="utf-8") as titled,
    ):
        for _ in range(part.before):
            titled.readline()
        src.seek(part.start)
        left = part.stop - part.start
        while left > 0:
            raw = src.readline()
            left -= len(raw)
            line = raw.decode("utf-8")
            entries = last(line[2:].split())
            if line[0] in "TDP" and block:  # a new block starts: the one before is complete
                dst.write(" ".join(block) + "\n")
                block = []
            if line[0] == "P":
                posting_done()
                named[0] = titled.readline().rstrip("\n")
                continue
            kept = [e for e in entries if window(e)]
            if line[0] in "Tt":
                in_titles.update(entries)
                title.extend(kept)
            else:
                said.extend(kept)
            counts.update(kept)
            block.extend(kept)
        if block:
            dst.write(" ".join(block) + "\n")
        posting_done()
    return counts, in_titles


def keep_words(phrased: Path, counts: Counter[str], min_count: int) -> int:
    """Give back to single words the occurrences phrases took, where a word would otherwise go without
    a vector: a word seen fewer than `min_count` times on its own, but at least that often counting
    the phrases it is in ("asylum" inside "asylum seekers"), gets phrase occurrences split back into
    words until it reaches `min_count`; a phrase is never split below `min_count` itself. Returns
    how many phrase occurrences were split."""
    inside: Counter[str] = Counter()
    for entry, n in counts.items():
        if PHRASE_JOINER in entry:
            for word in set(entry.split(PHRASE_JOINER)):
                if in_windows(word):
                    inside[word] += n
    need = {w: min_count - counts[w] for w, n in inside.items() if counts[w] < min_count <= counts[w] + n}
    if not need:
        return 0
    spare = {e: n - min_count for e, n in counts.items() if PHRASE_JOINER in e and n > min_count}
    # Only a line holding a phrase with a needed word can change: every other line is copied as it is.
    wanted = {e for e in spare if any(w in need for w in e.split(PHRASE_JOINER))}
    split = 0
    rewritten = phrased.with_suffix(".words.txt")
    with phrased.open(encoding="utf-8") as src, rewritten.open("w", encoding="utf-8") as dst:
        for line in src:
            if not wanted or wanted.isdisjoint(line.split()):
                dst.write(line)
                continue
            out: list[str] = []
            for entry in line.split():
                words = entry.split(PHRASE_JOINER) if PHRASE_JOINER in entry else ()
                if words and spare.get(entry, 0) > 0 and any(need.get(w, 0) > 0 for w in words):
                    spare[entry] -= 1
                    split += 1
                    for word in words:
                        if word in need:
                            need[word] -= 1
                    out.extend(w for w in words if in_windows(w))
                else:
                    out.append(entry)
            dst.write(" ".join(out) + "\n")
    rewritten.replace(phrased)
    return split
