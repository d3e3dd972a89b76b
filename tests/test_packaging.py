"""What ``pip install .`` ships: the built wheel carries the sample scenes, and the designer's
default scene resolves inside the installed package (not beside a checkout)."""

import os
import subprocess
import sys
import zipfile

import pytest

from conftest import ROOT


@pytest.mark.slow
def test_the_wheel_ships_the_samples_and_the_default_scene_loads_from_it(tmp_path):
    built = subprocess.run([sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", str(ROOT), "-w", str(tmp_path)],
                           capture_output=True, text=True, timeout=300)
    assert built.returncode == 0, built.stderr[-3000:]
    wheel = next(tmp_path.glob("skyloom-*.whl"))
    names = set(zipfile.ZipFile(wheel).namelist())
    for sample in sorted((ROOT / "sample_scenes").glob("*.json")):
        assert f"sample_scenes/{sample.name}" in names
    assert {"sample_scenes/cube.csv", "sample_scenes/meshes/footbridge.stl"} <= names
    site = tmp_path / "site"
    zipfile.ZipFile(wheel).extractall(site)
    probe = ("from app.main import DEFAULT_SCENE; from core.scene import load_scene; "
             "print(DEFAULT_SCENE); print(load_scene(DEFAULT_SCENE).name)")
    env = {**os.environ, "PYTHONPATH": str(site)}
    done = subprocess.run([sys.executable, "-c", probe], cwd=tmp_path, env=env, capture_output=True, text=True,
                          timeout=120)
    assert done.returncode == 0, done.stderr[-3000:]
    path, name = done.stdout.split("\n")[:2]
    assert path.startswith(str(site)) and name
