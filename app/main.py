"""``skyloom gui [SCENE]``: open the designer (the default sample scene when none is given)."""

from __future__ import annotations

import signal
import sys
from importlib.resources import files
from pathlib import Path

from PySide6.QtCore import QCoreApplication, Qt, QTimer
from PySide6.QtWidgets import QApplication, QMessageBox

from core.crash_log import write_crash_log
from core.errors import SkyloomError
from core.lifecycle import EXIT_CODES
from core.scene import load_scene

from .document import Document
from .main_window import MainWindow

#: The sample the designer opens without a scene (package data: present after ``pip install .`` too).
DEFAULT_SCENE = Path(str(files("sample_scenes") / "bridge_inspection.json"))


def create_window(scene_path: Path | None = None) -> MainWindow:
    """A designer window on ``scene_path`` (or the default sample). Raises :class:`SkyloomError`."""
    path = Path(scene_path or DEFAULT_SCENE)
    document = Document(load_scene(path), path)
    return MainWindow(document)


def prepare_qt() -> None:
    """Settings that must precede the QApplication: GL contexts share resources, so pyqtgraph's
    cached shader programs stay valid when a 3D view is closed and another opened."""
    QCoreApplication.setAttribute(Qt.ApplicationAttribute.AA_ShareOpenGLContexts)


def report_unexpected(kind, error, tb) -> None:
    """``sys.excepthook`` of the designer: an error that escaped a Qt slot goes to a log file; the
    user sees one line on the terminal and a message box, never a traceback."""
    log = write_crash_log("designer", error.with_traceback(tb))
    print(f"skyloom: internal error in the designer ({kind.__name__}); please report it with {log}", file=sys.stderr)
    if QApplication.instance() is not None:
        QMessageBox.critical(None, "Skyloom", f"Internal error ({kind.__name__}). Your scene is unchanged on disk; "
                             f"save your work under a new name.\n\nPlease report it with the log file:\n{log}")


def _quit_on_signals(app: QApplication) -> QTimer:
    """SIGINT and SIGTERM close the designer with their exit codes (130, 143). Python runs signal
    handlers only when the interpreter gets control, so a timer hands it control 5 times a second."""
    for signum, code in EXIT_CODES.items():
        signal.signal(signum, lambda *_args, code=code: app.exit(code))
    timer = QTimer()
    timer.timeout.connect(lambda: None)
    timer.start(200)
    return timer


def run(scene_path: Path | None = None) -> int:
    """Run the designer until its window closes; returns the exit status."""
    prepare_qt()
    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setApplicationName("Skyloom designer")
    sys.excepthook = report_unexpected
    ticker = _quit_on_signals(app)  # noqa: F841 - kept alive while the loop runs
    try:
        window = create_window(scene_path)
    except SkyloomError as exc:
        print(f"skyloom: error: {exc}", file=sys.stderr)
        return 2
    window.show()
    return app.exec()
