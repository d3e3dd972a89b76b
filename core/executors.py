"""Executors for the per-drone work of a plan (any :class:`concurrent.futures.Executor` works)."""

from __future__ import annotations

import multiprocessing
import os
import signal
import threading
from collections.abc import Iterator
from concurrent.futures import Executor, Future, ProcessPoolExecutor
from contextlib import contextmanager

from . import lifecycle
from .errors import PlanningError

#: How often a worker process looks whether the process that started it is still alive (s).
PARENT_POLL_S = 0.25
#: How long connecting to a Dask scheduler may take (s).
CLUSTER_CONNECT_S = 30.0


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


def _worker_start(parent_pid: int) -> None:
    """Runs first in every pool process: Ctrl-C (sent to the whole terminal group) is the parent's
    to handle, and a worker whose parent has died (even by SIGKILL) ends itself."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)

    def watch() -> None:
        while os.getppid() == parent_pid:
            threading.Event().wait(PARENT_POLL_S)
        os._exit(1)

    threading.Thread(target=watch, name="skyloom-parent-watch", daemon=True).start()


def _end_workers(pool: ProcessPoolExecutor) -> None:
    """Kill ``pool``'s processes now (their work is abandoned) and stop the pool without waiting."""
    processes = list((getattr(pool, "_processes", None) or {}).values())  # no public API before Python 3.14
    manager = getattr(pool, "_executor_manager_thread", None)  # shutdown() forgets it: take it first
    for process in processes:
        if process.is_alive():
            process.kill()
    pool.shutdown(wait=False, cancel_futures=True)
    for process in processes:
        process.join(timeout=1.0)
    # The pool's manager thread closes its wake-up pipe as it ends; Python 3.11's exit hook writes
    # to that pipe, and when both happen at once it prints "Bad file descriptor" with a traceback.
    # Waiting here for the thread (it ends within milliseconds once its workers are dead) rules it out.
    if manager is not None and manager is not threading.current_thread():
        manager.join(timeout=1.0)


@contextmanager
def plan_executor(executor: Executor | None = None, workers: int | None = None) -> Iterator[Executor]:
    """``executor`` if given (the caller owns it); else a process pool of ``workers`` (default:
    :func:`default_workers`) that starts its processes on first use, or an :class:`InlineExecutor`
    for one worker. Pools use the "spawn" start method, which is safe in a program with threads
    (the GUI). On a normal exit the pool is shut down; when the body raises (an error, a cancel,
    a signal) its processes are killed at once instead of finishing their QPs."""
    if executor is not None:
        yield executor
        return
    workers = workers or default_workers()
    if workers <= 1:
        yield InlineExecutor()
        return
    pool = ProcessPoolExecutor(workers, mp_context=multiprocessing.get_context("spawn"),
                               initializer=_worker_start, initargs=(os.getpid(),))
    forget = lifecycle.on_emergency_exit(lambda: _end_workers(pool))
    try:
        yield pool
    except BaseException:
        _end_workers(pool)
        raise
    else:
        pool.shutdown(wait=True)
    finally:
        forget()


@contextmanager
def cluster_executor(address: str) -> Iterator[Executor]:
    """An executor on a Dask distributed cluster: ``"local"`` starts a LocalCluster of
    :func:`default_workers` single-threaded worker processes on this machine; anything else is a
    scheduler address (``tcp://host:8786``). Closed on exit. Raises :class:`PlanningError` when
    dask.distributed is missing (``pip install 'skyloom[cluster]'``) or the scheduler is unreachable."""
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        raise PlanningError("--cluster needs dask.distributed: pip install 'skyloom[cluster]'") from None
    cluster = None
    try:
        if address == "local":
            cluster = LocalCluster(n_workers=default_workers(), threads_per_worker=1, processes=True,
                                   dashboard_address=None)
            client = Client(cluster)
        else:
            client = Client(address, timeout=CLUSTER_CONNECT_S)
    except (OSError, TimeoutError) as exc:
        if cluster is not None:
            cluster.close()
        raise PlanningError(f"--cluster {address}: cannot reach the Dask scheduler ({exc})") from None
    forget = lifecycle.on_emergency_exit(client.close)
    try:
        yield client.get_executor()
    finally:
        forget()
        client.close()
        if cluster is not None:
            cluster.close()
