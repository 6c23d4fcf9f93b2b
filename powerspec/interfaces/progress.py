"""Progress on stderr for long computations: a bar with the count and the time left.

:func:`progress_bar` returns a context manager whose value is a callback
``progress(done, total)`` (the signature the symmetry tier and the sweep use)
or ``None`` when nothing should be shown: with ``quiet``, or when stderr is
not a terminal (pipes, files, CI logs stay clean).  The bar itself is the
ecosystem's usual one (tqdm, imported only when a bar can be shown) and
appears only once the computation has run for :data:`DELAY` seconds, so
quick answers never flash a bar.

>>> import io
>>> with progress_bar("blocks", stream=io.StringIO()) as report:
...     report is None          # a StringIO is not a terminal: silent
True
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Callable, Iterator
from typing import TextIO

DELAY = 1.0
"""Seconds a computation runs before its bar appears."""

Progress = Callable[[int, int], None]


def wants_bar(quiet: bool = False, stream: TextIO | None = None) -> bool:
    """True when a bar may be drawn: not quiet and the stream is a terminal.

    >>> import io
    >>> wants_bar(False, io.StringIO()), wants_bar(True, sys.stderr)
    (False, False)
    """
    if quiet:
        return False
    stream = sys.stderr if stream is None else stream
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


class _Bar:
    """A tqdm bar driven by ``(done, total)`` reports; the total may be learnt late."""

    def __init__(self, label: str, unit: str, stream: TextIO, delay: float):
        self.label, self.unit, self.stream, self.delay = label, unit, stream, delay
        self.bar = None

    def __call__(self, done: int, total: int) -> None:
        if self.bar is None:
            from tqdm import tqdm

            self.bar = tqdm(total=total, desc=self.label, unit=self.unit, file=self.stream,
                            delay=self.delay, leave=False, dynamic_ncols=True)
        elif total != self.bar.total:
            self.bar.total = total
        self.bar.update(done - self.bar.n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


@contextlib.contextmanager
def progress_bar(label: str, *, unit: str = "block", quiet: bool = False,
                 stream: TextIO | None = None, delay: float = DELAY,
                 force: bool = False) -> Iterator[Progress | None]:
    """A ``progress(done, total)`` callback drawing a bar on ``stream`` (stderr), or None.

    ``force`` draws even when the stream is not a terminal (tests).  The bar
    is removed when the block ends, so the answer printed afterwards stands
    alone.
    """
    stream = sys.stderr if stream is None else stream
    if not (force and not quiet) and not wants_bar(quiet, stream):
        yield None
        return
    bar = _Bar(label, unit, stream, delay)
    try:
        yield bar
    finally:
        bar.close()


__all__ = ["DELAY", "Progress", "progress_bar", "wants_bar"]
