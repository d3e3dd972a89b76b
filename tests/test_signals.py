"""SIGINT, SIGTERM and SIGKILL of a running plan: exit codes (130, 143: 128 + the signal number,
the POSIX shell convention), worker processes and the resource tracker ended, no staging folder
left, the earlier export intact. Linux only (reads /proc)."""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from conftest import ROOT
from core.reading import file_sha256

pytestmark = [pytest.mark.slow, pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs /proc")]
COURTYARD = ROOT / "sample_scenes" / "courtyard_swap.json"


def descendants(pid: int) -> set[int]:
    """Every living process below ``pid`` (from /proc)."""
    parent_of = {}
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if fields[0] != "Z":
                parent_of[int(entry.name)] = int(fields[1])
    found, frontier = set(), {pid}
    while frontier:
        frontier = {child for child, parent in parent_of.items() if parent in frontier} - found
        found |= frontier
    return found


def alive(pids: set[int]) -> set[int]:
    out = set()
    for p in pids:
        try:
            state = Path(f"/proc/{p}/stat").read_text().rsplit(")", 1)[1].split()[0]
        except OSError:
            continue
        if state != "Z":
            out.add(p)
    return out


def _start_plan(tmp_path: Path) -> tuple[subprocess.Popen, Path, dict[str, str], set[int]]:
    """A courtyard plan with 2 workers writing over an earlier export; returns once its pool runs."""
    out = tmp_path / "out"
    from core.cli import main

    assert main(["plan", str(ROOT / "sample_scenes" / "lab_eight.json"), "--out", str(out), "--quiet"]) == 0
    before = {p.name: file_sha256(p) for p in out.rglob("*") if p.is_file()}
    env = {**os.environ, "SKYLOOM_CACHE_DIR": str(tmp_path / "cache"), "PYTHONUNBUFFERED": "1"}
    proc = subprocess.Popen([sys.executable, "-m", "core.cli", "plan", str(COURTYARD), "--out", str(out), "--quiet",
                             "--workers", "2"], cwd=ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    deadline = time.monotonic() + 120
    while len(descendants(proc.pid)) < 3:  # two workers and the resource tracker
        assert proc.poll() is None, proc.communicate()
        assert time.monotonic() < deadline, "the worker pool never started"
        time.sleep(0.1)
    time.sleep(1.0)  # the workers are busy with QPs now
    return proc, out, before, descendants(proc.pid)


def _gone_within(pids: set[int], seconds: float) -> bool:
    deadline = time.monotonic() + seconds
    while alive(pids) and time.monotonic() < deadline:
        time.sleep(0.05)
    return not alive(pids)


@pytest.mark.parametrize("signum,code,word", [(signal.SIGINT, 130, "interrupted"),
                                              (signal.SIGTERM, 143, "terminated")])
def test_signal_ends_the_plan_and_its_workers_within_a_second(signum, code, word, tmp_path):
    proc, out, before, children = _start_plan(tmp_path)
    sent = time.monotonic()
    proc.send_signal(signum)
    stdout, stderr = proc.communicate(timeout=10)
    took = time.monotonic() - sent
    text = stdout.decode() + stderr.decode()
    assert proc.returncode == code, text
    assert took < 1.0, f"took {took:.2f} s"
    assert word in text and "Traceback" not in text, text
    assert _gone_within(children, 1.0), f"still running: {alive(children)}"
    assert {p.name: file_sha256(p) for p in out.rglob("*") if p.is_file()} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["cache", "out"]


def test_workers_end_themselves_when_the_plan_is_killed(tmp_path):
    proc, out, before, children = _start_plan(tmp_path)
    proc.kill()
    proc.wait(timeout=10)
    assert _gone_within(children, 2.0), f"orphaned: {alive(children)}"
    assert {p.name: file_sha256(p) for p in out.rglob("*") if p.is_file()} == before
    shutil.rmtree(tmp_path / "cache", ignore_errors=True)
