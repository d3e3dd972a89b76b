"""Shared builders for small scenes in tests."""

from __future__ import annotations

import os

import numpy as np
import pytest

from core.scene import scene_from_dict

ROOT = __import__("pathlib").Path(__file__).resolve().parents[1]

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
