"""A small text progress bar for long runs, drawn on standard error.

It draws only on a terminal: in a pipe, a log file or a batch job it stays silent, so logs do
not fill with carriage returns.
"""

from __future__ import annotations

import sys
import time
from typing import TextIO

__all__ = ["ProgressBar"]


class ProgressBar:
    """Count finished steps and redraw one line such as ``chunks  3/10 [######----] 30 %``.

    Parameters
    ----------
    total : int
        Number of steps.
    label : str
        Text before the counter.
    enabled : bool or None
        True to draw, False to stay silent, None (default) to draw only when ``stream`` is a
        terminal.
    stream : file, optional
        Where to draw (default: ``sys.stderr``).
    width : int
        Width of the bar in characters.

    Examples
    --------
    >>> bar = ProgressBar(4, enabled=False)
    >>> bar.advance(2)
    >>> bar.done
    2
    >>> bar.close()
    """

    def __init__(self, total: int, label: str = "progress", *, enabled: bool | None = None,
                 stream: TextIO | None = None, width: int = 30) -> None:
        self.total = max(int(total), 0)
        self.label = label
        self.stream = sys.stderr if stream is None else stream
        if enabled is None:
            isatty = getattr(self.stream, "isatty", None)
            enabled = bool(isatty and isatty())
        self.enabled = enabled
        self.width = width
        self.done = 0
        self._start = time.monotonic()
        self._drawn = False

    def advance(self, steps: int = 1) -> None:
        """Record ``steps`` more finished steps and redraw."""
        self.done = min(self.done + steps, self.total)
        self._draw()

    def _draw(self) -> None:
        if not self.enabled:
            return
        fraction = self.done / self.total if self.total else 1.0
        filled = round(fraction * self.width)
        elapsed = time.monotonic() - self._start
        text = (f"\r{self.label} {self.done:>{len(str(self.total))}}/{self.total} "
                f"[{'#' * filled}{'-' * (self.width - filled)}] {100 * fraction:3.0f} % "
                f"{elapsed:6.1f} s")
        if 0 < self.done < self.total:
            # a straight-line estimate: chunks of a spectral run take about the same time
            text += f", about {elapsed * (self.total - self.done) / self.done:.0f} s left"
        self.stream.write(text + "\033[K")
        self.stream.flush()
        self._drawn = True

    def close(self) -> None:
        """Finish the line (if anything was drawn)."""
        if self.enabled and self._drawn:
            self.stream.write("\n")
            self.stream.flush()
        self._drawn = False

    def __enter__(self) -> ProgressBar:
        self._draw()
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()
