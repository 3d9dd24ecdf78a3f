"""A run killed with SIGKILL part-way, then resumed, equals an uninterrupted run byte for byte."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from _dataset_doubles import spec, tree

from genfield.dataset.writer import write_dataset

HERE = Path(__file__).resolve().parent
JOB = {"count": 12, "size": 24}
SCRIPT = f"""
import sys
sys.path.insert(0, {str(HERE)!r})
from _dataset_doubles import spec
from genfield.dataset.writer import write_dataset
if __name__ == "__main__":
    write_dataset(sys.argv[1], spec(**{JOB!r}), workers=int(sys.argv[2]), resume=sys.argv[3] == "resume")
"""


def _start(out: Path, workers: int, mode: str, delay: str) -> subprocess.Popen:
    env = {**os.environ, "GENFIELD_TEST_DELAY": delay}
    return subprocess.Popen([sys.executable, "-c", SCRIPT, str(out), str(workers), mode], env=env,
                            start_new_session=True, stdout=subprocess.PIPE, stderr=subprocess.PIPE)


@pytest.mark.slow
@pytest.mark.parametrize("workers", [1, 2])
def test_sigkill_mid_run_then_resume_equals_an_uninterrupted_run(tmp_path, workers):
    reference = tmp_path / "ref"
    write_dataset(reference, spec(**JOB))
    out = tmp_path / "killed"
    proc = _start(out, workers, "fresh", "0.15")
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and proc.poll() is None:
            records = list((out / "records").glob("*.json")) if (out / "records").is_dir() else []
            if len(records) >= 3:
                break
            time.sleep(0.02)
        assert proc.poll() is None, proc.communicate()[1].decode()
        os.killpg(proc.pid, signal.SIGKILL)  # the run and its workers, at once
    finally:
        proc.wait(timeout=30)
    done = len(list((out / "records").glob("*.json")))
    assert 3 <= done < 12
    assert '"complete": false' in (out / "manifest.json").read_text()
    resumed = _start(out, workers, "resume", "0")
    _, err = resumed.communicate(timeout=120)
    assert resumed.returncode == 0, err.decode()
    assert tree(out) == tree(reference)
