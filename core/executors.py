"""Executors for the per-drone work of a plan (any :class:`concurrent.futures.Executor` works)."""

from __future__ import annotations

import multiprocessing
import os
from collections.abc import Iterator
from concurrent.futures import Executor, Future, ProcessPoolExecutor
from contextlib import contextmanager


class InlineExecutor(Executor):
    """Runs every submitted call at once in the calling thread (one worker, no start-up cost)."""

    def submit(self, fn, /, *args, **kwargs) -> Future:
        future: Future = Future()
        try:
            future.set_result(fn(*args, **kwargs))
        except BaseException as exc:  # noqa: BLE001 - handed to the caller through the future
            future.set_exception(exc)
        return future


def default_workers() -> int:
    """Worker processes used when none are requested: the CPUs this process may use."""
    return len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)


@contextmanager
def plan_executor(executor: Executor | None = None, workers: int | None = None) -> Iterator[Executor]:
    """``executor`` if given (the caller owns it); else a process pool of ``workers`` (default:
    :func:`default_workers`) that starts its processes on first use and is shut down on exit, or an
    :class:`InlineExecutor` for one worker. Pools use the "spawn" start method, which is safe in
    a program with threads (the GUI)."""
    if executor is not None:
        yield executor
        return
    workers = workers or default_workers()
    if workers <= 1:
        yield InlineExecutor()
        return
    with ProcessPoolExecutor(workers, mp_context=multiprocessing.get_context("spawn")) as pool:
        yield pool
