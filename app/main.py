"""``skyloom gui [SCENE]``: open the designer (the default sample scene when none is given)."""

from __future__ import annotations

import sys
from pathlib import Path

from PySide6.QtCore import QCoreApplication, Qt
from PySide6.QtWidgets import QApplication

from core.errors import SkyloomError
from core.scene import load_scene

from .document import Document
from .main_window import MainWindow

DEFAULT_SCENE = Path(__file__).resolve().parents[1] / "sample_scenes" / "bridge_inspection.json"


def create_window(scene_path: Path | None = None) -> MainWindow:
    """A designer window on ``scene_path`` (or the default sample). Raises :class:`SkyloomError`."""
    path = Path(scene_path or DEFAULT_SCENE)
    document = Document(load_scene(path), path)
    return MainWindow(document)


def prepare_qt() -> None:
    """Settings that must precede the QApplication: GL contexts share resources, so pyqtgraph's
    cached shader programs stay valid when a 3D view is closed and another opened."""
    QCoreApplication.setAttribute(Qt.ApplicationAttribute.AA_ShareOpenGLContexts)


def run(scene_path: Path | None = None) -> int:
    """Run the designer until its window closes; returns the exit status."""
    prepare_qt()
    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setApplicationName("Skyloom designer")
    try:
        window = create_window(scene_path)
    except SkyloomError as exc:
        print(f"skyloom: error: {exc}", file=sys.stderr)
        return 2
    window.show()
    return app.exec()
