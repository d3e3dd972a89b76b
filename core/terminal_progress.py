"""A plain text progress bar for the command line (stderr)."""

from __future__ import annotations

import sys
import time


class TerminalProgress:
    """Progress callback drawing ``stage [#####-----]  50% message`` on one stderr line.

    On a terminal the line is redrawn in place; otherwise a line is printed per stage change.
    """

    def __init__(self, stream=None, width: int = 28, min_interval_s: float = 0.1):
        self.stream = stream or sys.stderr
        self.width = width
        self.min_interval_s = min_interval_s
        self._stage = None
        self._last = 0.0
        self._tty = hasattr(self.stream, "isatty") and self.stream.isatty()

    def __call__(self, stage: str, fraction: float, message: str) -> None:
        now = time.monotonic()
        changed = stage != self._stage
        if not changed and now - self._last < self.min_interval_s and fraction < 1.0:
            return
        self._last = now
        if not self._tty:
            if changed:
                self.stream.write(f"{stage}: {message}\n")
                self._stage = stage
            return
        if changed and self._stage is not None:
            self.stream.write("\n")
        self._stage = stage
        filled = int(round(self.width * min(max(fraction, 0.0), 1.0)))
        bar = "#" * filled + "-" * (self.width - filled)
        self.stream.write(f"\r{stage:<13} [{bar}] {fraction:4.0%} {message[:40]:<40}")
        self.stream.flush()

    def close(self) -> None:
        if self._tty and self._stage is not None:
            self.stream.write("\n")
