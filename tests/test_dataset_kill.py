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
         "--count", str(COUNT), *extra],
        start_new_session=True, stdout=subprocess.PIPE, stderr=subprocess.PIPE)


@pytest.mark.slow
def test_sigkill_mid_run_then_resume_equals_an_uninterrupted_run(recipe, reference, tmp_path):
    # Two worker processes: the kill also hits them and the fork server mid-flight.
    out = tmp_path / "ds"
    proc = _render(recipe, out, "--workers", "2")
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and proc.poll() is None:
            if (out / "records").is_dir() and len(list((out / "records").glob("*.json"))) >= 3:
                break
            time.sleep(0.01)
        assert proc.poll() is None, proc.communicate()[1].decode()
        os.killpg(proc.pid, signal.SIGKILL)  # the run and its workers at once, no clean-up
    finally:
        proc.wait(timeout=30)
    done = len(list((out / "records").glob("*.json")))
    assert 3 <= done < COUNT
    assert '"complete": false' in (out / "manifest.json").read_text()
    resumed = _render(recipe, out, "--workers", "2", "--resume")
    _, err = resumed.communicate(timeout=300)
    assert resumed.returncode == 0, err.decode()
    assert tree(out) == reference
