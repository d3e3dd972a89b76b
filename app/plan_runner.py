"""Runs ``core.pipeline.plan`` in a worker thread with progress, stage names and cancel; the
window stays responsive, and the document's plan changes only when a new plan succeeds."""

from __future__ import annotations

import gc

from PySide6.QtCore import QObject, QThread, Signal

from core.crash_log import write_crash_log
from core.errors import Cancelled, SkyloomError
from core.inspection import closest_approaches
from core.pipeline import PlanResult, plan
from core.progress import CancelToken
from core.scene import Scene

from .document import Document


class _PlanJob(QObject):
    progress = Signal(str, float, str)
    finished = Signal(object, object)  # PlanResult, its close approaches
    failed = Signal(str)
    cancelled = Signal()

    def __init__(self, scene: Scene, base_dir, workers: int | None, cancel: CancelToken, previous: PlanResult | None,
                 source: str):
        super().__init__()
        self.scene, self.base_dir, self.workers, self.cancel = scene, base_dir, workers, cancel
        self.previous, self.source = previous, source

    def run(self) -> None:
        try:
            result = plan(self.scene, base_dir=self.base_dir, progress=self.progress.emit, cancel=self.cancel,
                          workers=self.workers, previous=self.previous, source=self.source)
        except Cancelled:
            self.cancelled.emit()
        except SkyloomError as exc:
            self.failed.emit(str(exc))
        except Exception as exc:  # noqa: BLE001 - shown as a readable message, never a traceback
            log = write_crash_log("designer: planning", exc)
            self.failed.emit(f"internal error ({type(exc).__name__}); this is a bug, please report it with the scene "
                             f"file and the log file {log}")
        else:  # the close approaches are sampled here too, off the GUI thread
            self.finished.emit(result, closest_approaches(result.trajectory, result.scene.fleet.clearance))


class PlanRunner(QObject):
    """Starts and cancels plans for a :class:`Document`; one plan at a time."""

    started = Signal()
    progress = Signal(str, float, str)  # stage, fraction, message
    done = Signal(str)  # a one-line outcome for the status bar
    failed = Signal(str)

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self._thread: QThread | None = None
        self._job: _PlanJob | None = None
        self._cancel: CancelToken | None = None

    @property
    def running(self) -> bool:
        return self._thread is not None

    def start(self) -> bool:
        """Plan the document's scene; False (with a message) when it cannot start."""
        if self.running:
            return False
        problems = self.document.problems()
        if problems:
            self.failed.emit("The scene cannot be planned yet:\n" + "\n".join(f"• {w}: {why}" for w, why in problems))
            return False
        self._cancel = CancelToken()
        # Python's cyclic collector runs in whichever thread happens to allocate; run there, it can
        # free a Qt object off the GUI thread, and PySide then deadlocks in the object's destructor
        # (seen: the planning thread stuck in QObject::~QObject). So garbage is collected here, on
        # the GUI thread, and automatic collection waits until the plan is done (_end).
        gc.collect()
        gc.disable()
        self._thread = QThread()
        # The current plan lends its context and every transition an edit did not touch.
        self._job = _PlanJob(self.document.scene, self.document.base_dir, self.document.workers, self._cancel,
                             self.document.plan, self.document.source_name)
        self._job.moveToThread(self._thread)
        self._thread.started.connect(self._job.run)
        self._job.progress.connect(self.progress)
        self._job.finished.connect(self._finished)
        self._job.failed.connect(self._failed)
        self._job.cancelled.connect(self._cancelled)  # methods, not lambdas: queued to this thread
        self._thread.start()
        self.started.emit()
        return True

    def cancel(self) -> None:
        if self._cancel is not None:
            self._cancel.cancel()

    def wait(self, ms: int = 60_000) -> None:
        if self._thread is not None:
            self._thread.wait(ms)

    def _finished(self, result: PlanResult, approaches: list) -> None:
        self.document.set_plan(result, approaches)
        verdict = "verified" if result.verified else f"FAILED verification ({len(result.report.violations)} problems)"
        self._end(f"planned {result.trajectory.n_drones} drones, {result.trajectory.duration:.1f} s — {verdict}")

    def _cancelled(self) -> None:
        self._end("planning cancelled; the previous plan is kept")

    def _failed(self, text: str) -> None:
        self._end("planning failed; the previous plan is kept")
        self.failed.emit(text)

    def _end(self, text: str) -> None:
        thread = self._thread
        self._thread, self._job, self._cancel = None, None, None
        if thread is not None:
            thread.quit()
            thread.wait()
        gc.enable()
        self.done.emit(text)
