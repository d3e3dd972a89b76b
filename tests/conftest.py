"""Shared builders for small scenes in tests, and the designer's fixtures (documents and windows on
sample scenes, clicks in the layout, planning in a window)."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QPointF, QSettings, Qt

from core.scene import load_scene, scene_from_dict

ROOT = Path(__file__).resolve().parents[1]

# Qt: a real X server gives OpenGL. pytest-xvfb starts a virtual one when Xvfb is installed (as
# .ci/run installs it); without an X server, widgets still run on the offscreen platform and the
# tests that need OpenGL are skipped with that reason. Decided in pytest_configure, after the
# plugin has set DISPLAY.
HAS_OPENGL = False


@pytest.hookimpl(trylast=True)
def pytest_configure(config):
    """After pytest-xvfb, before pytest-qt makes the QApplication: pick the Qt platform, and share
    GL contexts as the designer does (pyqtgraph caches shader programs, which must outlive the view
    that compiled them)."""
    global HAS_OPENGL
    from app.main import prepare_qt

    os.environ.setdefault("QT_QPA_PLATFORM", "xcb" if os.environ.get("DISPLAY") else "offscreen")
    HAS_OPENGL = os.environ["QT_QPA_PLATFORM"] == "xcb"
    config.addinivalue_line("markers", "needs_opengl: needs an X server with OpenGL (the 3D view)")
    prepare_qt()



def scene_dict(formations: dict[str, np.ndarray], transitions: list[dict], *, radius_xy=0.2, radius_z=0.5,
               speed_xy=3.0, speed_z=2.0, accel=2.0, volume=((-50, -50, -1), (50, 50, 50)), keep_out=(),
               groups: dict[str, list[str]] | None = None) -> dict:
    """A one-type scene dict whose first formation is the start."""
    names = list(formations)
    n = len(formations[names[0]])
    return {
        "name": "test",
        "site": {"flight_volume": {"lower": list(volume[0]), "upper": list(volume[1])},
                 "keep_out": [{"name": f"box{k}", "lower": list(lo), "upper": list(hi)}
                              for k, (lo, hi) in enumerate(keep_out)]},
        "fleet": {"types": [{"name": "q", "radius_xy": radius_xy, "radius_z": radius_z, "max_speed_xy": speed_xy,
                             "max_speed_z": speed_z, "max_acceleration": accel}],
                  "drones": [{"id": f"d{i}", "type": "q"} for i in range(n)]},
        "formations": [{"name": k, "points": np.asarray(v, dtype=float).tolist(),
                        **({"groups": groups[k]} if groups and k in groups else {})} for k, v in formations.items()],
        "timeline": {"start": names[0], "transitions": transitions},
    }


@pytest.fixture
def make_scene():
    def build(*args, **kwargs):
        return scene_from_dict(scene_dict(*args, **kwargs))
    return build


@pytest.fixture(autouse=True)
def _private_roadmap_cache(tmp_path_factory, monkeypatch):
    """Every test gets its own roadmap cache folder (never the user's)."""
    monkeypatch.setenv("SKYLOOM_CACHE_DIR", str(tmp_path_factory.mktemp("cache")))


# --- the designer (pytest-qt) ------------------------------------------------------------

SAMPLES = ROOT / "sample_scenes"
#: Tests that need OpenGL (the 3D view): skipped with the reason where there is no X server
#: (decided in :func:`pytest_collection_modifyitems`, after pytest_configure has looked).
needs_opengl = pytest.mark.needs_opengl
NO_OPENGL = ("needs an X server with OpenGL: install Xvfb and Mesa (see .ci/run); pytest-xvfb then starts one")


def pytest_collection_modifyitems(config, items):
    if HAS_OPENGL:
        return
    skip = pytest.mark.skip(reason=NO_OPENGL)
    for item in items:
        if item.get_closest_marker("needs_opengl"):
            item.add_marker(skip)


@pytest.fixture(autouse=True)
def unsaved_prompt(monkeypatch):
    """Answers the designer's unsaved-changes question (Discard unless a test sets ``answer``) and
    records the questions: a real modal box would wait for a click forever."""
    from types import SimpleNamespace

    from PySide6.QtWidgets import QMessageBox
    asked = SimpleNamespace(questions=[], answer=QMessageBox.StandardButton.Discard)

    def question(parent, title, text, buttons, default):
        asked.questions.append(text)
        return asked.answer

    monkeypatch.setattr(QMessageBox, "question", staticmethod(question))
    return asked


@pytest.fixture
def settings(tmp_path):
    return QSettings(str(tmp_path / "designer.ini"), QSettings.Format.IniFormat)


@pytest.fixture
def document(settings):
    from app.document import Document
    path = SAMPLES / "lab_eight.json"
    doc = Document(load_scene(path), path, settings)
    doc.workers = 1
    return doc


@pytest.fixture
def layout(qtbot, document):
    """The formation layout view, shown (clicks need an exposed widget)."""
    from app.layout_view import LayoutView
    view = LayoutView(document)
    qtbot.addWidget(view)
    view.resize(900, 700)
    view.show()
    qtbot.waitExposed(view)
    return view


def click_view(qtbot, plot, x, y, modifier=Qt.KeyboardModifier.NoModifier):
    """Hover, then click at view coordinates (x, y) m (the first hover may still re-lay out the axes)."""
    for _ in range(2):
        pixel = plot.mapFromScene(plot.box.mapViewToScene(QPointF(x, y)))
        qtbot.mouseMove(plot.viewport(), pixel)
        qtbot.wait(30)
    qtbot.mouseClick(plot.viewport(), Qt.MouseButton.LeftButton, modifier, pixel)


@pytest.fixture
def make_window(qtbot, settings):
    """Designer windows on sample scenes (planning in this process: workers = 1)."""
    from app.document import Document
    from app.main_window import MainWindow
    made = []

    def make(name="bridge_inspection.json", folder=SAMPLES):
        path = Path(folder) / name
        doc = Document(load_scene(path), path, settings)
        doc.workers = 1
        w = MainWindow(doc)
        qtbot.addWidget(w)
        w.show()
        qtbot.waitExposed(w)
        made.append(w)
        return w

    yield make
    for w in made:
        if w.runner.running:
            w.runner.cancel()
            w.runner.wait()



@pytest.fixture
def window(make_window):
    return make_window()


def plan_in_window(qtbot, window, timeout=120_000):
    window.start_plan()
    qtbot.waitUntil(lambda: not window.runner.running, timeout=timeout)


