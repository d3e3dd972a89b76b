"""Ending a run cleanly and quickly on SIGINT or SIGTERM.

Inside :func:`signal_guard` (installed by the command line), SIGINT raises ``KeyboardInterrupt``
and SIGTERM raises :class:`Terminated` in the main thread, so every ``with`` block unwinds:
worker processes are ended, staging folders removed, an earlier export left intact. Python runs
signal handlers only between bytecodes, so a main thread inside a long C call (a solver, a
dense assignment) would delay that. A watchdog thread therefore wakes on the signal itself
(:func:`signal.set_wakeup_fd`) and, if the process is still alive ``grace_s`` later, runs the
cleanups registered with :func:`on_emergency_exit` and ends the process with the signal's exit
code (130 for SIGINT, 143 for SIGTERM: 128 + the signal number, the shell convention).
"""

from __future__ import annotations

import itertools
import os
import signal
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager, suppress

#: Exit code per signal (128 + signal number, as shells report a process ended by a signal).
EXIT_CODES = {signal.SIGINT: 128 + signal.SIGINT, signal.SIGTERM: 128 + signal.SIGTERM}


class Terminated(BaseException):
    """SIGTERM arrived (a ``BaseException``, like ``KeyboardInterrupt``, so no handler swallows it)."""


_cleanups: dict[int, Callable[[], None]] = {}
_cleanups_lock = threading.Lock()
_ids = itertools.count()


def on_emergency_exit(cleanup: Callable[[], None]) -> Callable[[], None]:
    """Register ``cleanup`` (thread-safe, quick, never raising) to run if a signal ends the process
    before the orderly path does; returns the function that unregisters it."""
    key = next(_ids)
    with _cleanups_lock:
        _cleanups[key] = cleanup

    def unregister() -> None:
        with _cleanups_lock:
            _cleanups.pop(key, None)

    return unregister


def run_emergency_cleanups() -> None:
    """Run (and forget) every registered cleanup, newest first; errors are ignored."""
    with _cleanups_lock:
        pending = [_cleanups.pop(k) for k in sorted(_cleanups, reverse=True)]
    for cleanup in pending:
        with suppress(Exception):  # best effort while the process is being ended
            cleanup()


def _raise_for(signum, _frame):
    if signum == signal.SIGTERM:
        raise Terminated()
    raise KeyboardInterrupt()


def _watchdog(read_fd: int, finished: threading.Event, grace_s: float) -> None:
    try:
        received = os.read(read_fd, 1)
    except OSError:
        received = b""
    finally:
        os.close(read_fd)
    if not received or finished.wait(grace_s):
        return  # the guard closed the pipe, or the orderly path ended in time
    run_emergency_cleanups()
    try:
        os.write(2, b"\nskyloom: stopped by a signal; worker processes ended, nothing half-written kept\n")
    finally:
        os._exit(EXIT_CODES.get(received[0], 128 + received[0]))


@contextmanager
def signal_guard(grace_s: float = 0.7) -> Iterator[None]:
    """SIGINT → ``KeyboardInterrupt``, SIGTERM → :class:`Terminated`, with the watchdog above.
    Does nothing outside the main thread (signals are delivered there only)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    read_fd, write_fd = os.pipe()
    os.set_blocking(write_fd, False)
    finished = threading.Event()
    previous = {s: signal.signal(s, _raise_for) for s in EXIT_CODES}
    previous_fd = signal.set_wakeup_fd(write_fd, warn_on_full_buffer=False)
    threading.Thread(target=_watchdog, args=(read_fd, finished, grace_s), name="skyloom-signal-watchdog",
                     daemon=True).start()
    try:
        yield
    finally:
        finished.set()
        signal.set_wakeup_fd(previous_fd)
        for s, handler in previous.items():
            signal.signal(s, handler)
        os.close(write_fd)  # the watchdog reads end-of-file and stops
