"""A real ``genfield render`` process killed with SIGKILL part-way, then resumed with --resume,
leaves a dataset byte-identical to an uninterrupted run."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import pytest
from _dataset_doubles import RECIPE, tiny_model_file, tree

from genfield.cli import main

COUNT = 16


@pytest.fixture(scope="module")
def recipe(tmp_path_factory):
    folder = tmp_path_factory.mktemp("killed")
    tiny_model_file(folder / "model.gfm")
    (folder / "tray.gfr").write_text(RECIPE)
    return folder / "tray.gfr"


@pytest.fixture(scope="module")
def reference(recipe):
    out = recipe.parent / "reference"
    assert main(["render", str(recipe), "--out", str(out), "--count", str(COUNT)]) == 0
    return tree(out)


def _render(recipe, out, *extra: str) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "genfield", "render", str(recipe), "--out", str(out),
         "--count", str(COUNT), "--workers", "2", *extra],
        start_new_session=True, stdout=subprocess.PIPE, stderr=subprocess.PIPE)


def _records(out) -> int:
    return len(list((out / "records").glob("*.json"))) if (out / "records").is_dir() else 0


def _signal_after(proc: subprocess.Popen, out, records: int, sig: int) -> None:
    """Send ``sig`` to the run's whole process group once ``records`` images are committed."""
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and proc.poll() is None and _records(out) < records:
        time.sleep(0.01)
    assert proc.poll() is None, proc.communicate()[1].decode()
    os.killpg(proc.pid, sig)  # as a terminal's Ctrl-C, or a scheduler's kill, would


def _group_gone(pgid: int) -> bool:
    deadline = time.monotonic() + 20
    while time.monotonic() < deadline:
        try:
            os.killpg(pgid, 0)
        except ProcessLookupError:
            return True
        time.sleep(0.05)
    return False


@pytest.mark.slow
def test_ctrl_c_then_sigkill_then_resume_equals_an_uninterrupted_run(recipe, reference, tmp_path):
    # Two worker processes each time: the signals also reach them and the fork server.
    out = tmp_path / "ds"
    proc = _render(recipe, out)
    _signal_after(proc, out, 3, signal.SIGINT)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, err.decode()
    assert _group_gone(proc.pid)  # no worker left running
    assert not list(out.rglob(".*"))  # no temp file left
    assert '"complete": false' in (out / "manifest.json").read_text()
    stopped = _records(out)
    assert 3 <= stopped < COUNT

    proc = _render(recipe, out, "--resume")
    _signal_after(proc, out, stopped + 3, signal.SIGKILL)
    proc.wait(timeout=30)
    assert _group_gone(proc.pid)
    assert _records(out) < COUNT

    proc = _render(recipe, out, "--resume")
    _, err = proc.communicate(timeout=300)
    assert proc.returncode == 0, err.decode()
    assert tree(out) == reference
