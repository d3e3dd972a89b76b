"""Progress reporting and cancellation shared by every long stage (no Qt here)."""

from __future__ import annotations

import threading
from collections.abc import Callable

from .errors import Cancelled

#: ``progress(stage, fraction, message)``: stage name, fraction done in [0, 1], short message.
ProgressCallback = Callable[[str, float, str], None]


def no_progress(stage: str, fraction: float, message: str) -> None:
    """Progress callback that ignores every report."""


class CancelToken:
    """Thread-safe cancel flag handed to every long stage; stages call :meth:`check` often."""

    def __init__(self) -> None:
        self._event = threading.Event()

    def cancel(self) -> None:
        self._event.set()

    @property
    def cancelled(self) -> bool:
        return self._event.is_set()

    def check(self) -> None:
        """Raise :class:`Cancelled` if cancellation was requested."""
        if self._event.is_set():
            raise Cancelled("cancelled by the user")
