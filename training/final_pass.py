"""The last pass over the scratch corpus, once the phrase passes are learned.

It applies the last phrase pass and the title pass and writes the two files the rest of the run
reads: one line a block for skip-gram (its windows span the sentences of a paragraph or list item;
numbers and lone letters left out), and one line a posting of its title entries and description
entries, for the duties. It then gives back to single words the occurrences phrases took where a
word would otherwise go without a vector.
"""

from __future__ import annotations

import functools
import os
from collections import Counter
from pathlib import Path

from training.first_pass import Scratch
from widen.model.phrases import Phraser
from widen.text.forms import PHRASE_JOINER
from widen.text.tokenize import in_windows

__all__ = ["final_pass", "keep_words"]


def final_pass(
    phraser: Phraser, scratch: Scratch, phrased: Path, postings: Path, names: Path | None = None
) -> tuple[Counter[str], Counter[str]]:
    """Apply the last phrase pass and the title pass; write one line a block for skip-gram, whose
    windows then span the sentences of a paragraph or list item (numbers and lone letters left out),
    and one line a posting of its title entries, description entries and the titles it names (read
    from `names`, one line a posting in the scratch corpus's order), for the duties. Returns the
    count of every entry written for skip-gram, and of the entries used in titles."""
    counts: Counter[str] = Counter()
    in_titles: Counter[str] = Counter()
    passes = phraser.passes[-1:] if scratch.generation < len(phraser.passes) else []
    last = Phraser(passes, phraser.titles)
    block: list[str] = []
    title: list[str] = []
    said: list[str] = []
    named: list[str] = [""]
    window = functools.cache(in_windows)  # tens of thousands of entries, many millions of uses

    def posting_done() -> None:
        if title or said:
            out.write(" ".join(title) + "\t" + " ".join(said) + "\t" + named[0] + "\n")
        title.clear()
        said.clear()

    with (
        scratch.path.open(encoding="utf-8") as src,
        phrased.open("w", encoding="utf-8") as dst,
        postings.open("w", encoding="utf-8") as out,
        names.open(encoding="utf-8") if names is not None else open(os.devnull, encoding="utf-8") as titled,
    ):
        for line in src:
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
