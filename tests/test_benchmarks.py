"""Every benchmark under bench/ runs at its smoke size, so none can rot (figures are not checked:
benchmarks report ratios for people; here only that they still run to the end)."""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

from conftest import ROOT

BENCHMARKS = sorted(p.name for p in (ROOT / "bench").glob("bench_*.py"))


@pytest.mark.slow
@pytest.mark.parametrize("name", BENCHMARKS)
def test_benchmark_runs_at_smoke_size(name, tmp_path):
    if name == "bench_gui.py" and not os.environ.get("DISPLAY"):
        pytest.skip("the designer benchmark needs an X server: install Xvfb (pytest-xvfb starts it)")
    env = {**os.environ, "SKYLOOM_CACHE_DIR": str(tmp_path), "PYTHONPATH": str(ROOT)}
    done = subprocess.run([sys.executable, str(ROOT / "bench" / name), "--smoke"], cwd=ROOT, env=env,
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stdout[-2000:] + done.stderr[-3000:]
    assert done.stdout.strip(), "the benchmark printed no figures"
