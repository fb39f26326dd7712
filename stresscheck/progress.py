"""Progress of long runs on stderr: a bar when stderr is a terminal, nothing otherwise
(logs and pipes stay clean; stdout is never touched)."""

from __future__ import annotations

import sys
import time

BAR_WIDTH = 30


class ProgressBar:
    """``bar(done, total)`` redraws one line on ``stream``; ``close()`` ends it."""

    def __init__(self, label: str, stream=None):
        self.label = label
        self.stream = stream if stream is not None else sys.stderr
        self.start = time.monotonic()
        self.drawn = False

    def __call__(self, done: int, total: int) -> None:
        share = done / total if total else 1.0
        filled = int(round(BAR_WIDTH * share))
        elapsed = time.monotonic() - self.start
        left = elapsed / share - elapsed if share > 0 else 0.0
        self.stream.write(f"\r{self.label} [{'#' * filled}{'.' * (BAR_WIDTH - filled)}] "
                          f"{100 * share:5.1f} % {done}/{total}, {elapsed:.1f} s, "
                          f"~{left:.0f} s left ")
        self.stream.flush()
        self.drawn = True

    def close(self) -> None:
        if self.drawn:
            self.stream.write("\n")
            self.stream.flush()


def progress_for(label: str, stream=None) -> ProgressBar | None:
    """A ProgressBar when ``stream`` (default stderr) is a terminal, else None."""
    stream = stream if stream is not None else sys.stderr
    try:
        tty = stream.isatty()
    except (AttributeError, ValueError):
        tty = False
    return ProgressBar(label, stream) if tty else None
