"""Progress for long work: a bar on a terminal, plain periodic lines in a log.

A nightly job writes to a log file, where a redrawn bar is noise; a person at a
terminal wants the bar. Both see the same stage names and counts.
"""

from __future__ import annotations

import sys
import time
from types import TracebackType
from typing import IO

from tqdm import tqdm

__all__ = ["Progress"]


class Progress:
    """Count work in one stage.

    Parameters: `stage` names the stage; `total` is the expected count, if known;
    `unit` what is counted; `stream` where to write (stderr by default);
    `every` seconds between plain lines when the stream is not a terminal.
    """

    def __init__(
        self,
        stage: str,
        total: int | None = None,
        unit: str = "it",
        stream: IO[str] | None = None,
        every: float = 10.0,
    ) -> None:
        self.stage = stage
        self.total = total
        self.unit = unit
        self.stream = stream if stream is not None else sys.stderr
        self.every = every
        self.count = 0
        self.started = time.monotonic()
        self._last = self.started
        self._bar: tqdm | None = None
        if _is_terminal(self.stream):
            self._bar = tqdm(total=total, desc=stage, unit=unit, file=self.stream, leave=False, dynamic_ncols=True)

    def update(self, n: int = 1) -> None:
        self.count += n
        if self._bar is not None:
            self._bar.update(n)
            return
        now = time.monotonic()
        if now - self._last >= self.every:
            self._last = now
            self._line()

    def _line(self, final: bool = False) -> None:
        elapsed = time.monotonic() - self.started
        of = f"/{self.total}" if self.total else ""
        word = "done" if final else "..."
        print(f"[{self.stage}] {self.count}{of} {self.unit} {word} {elapsed:.1f}s", file=self.stream, flush=True)

    @property
    def seconds(self) -> float:
        return time.monotonic() - self.started

    def close(self) -> None:
        if self._bar is not None:
            self._bar.close()
        self._line(final=True)

    def __enter__(self) -> Progress:
        return self

    def __exit__(
        self, kind: type[BaseException] | None, value: BaseException | None, trace: TracebackType | None
    ) -> None:
        if kind is None:
            self.close()
        elif self._bar is not None:
            self._bar.close()


def _is_terminal(stream: IO[str]) -> bool:
    try:
        return stream.isatty()
    except (AttributeError, ValueError):
        return False
