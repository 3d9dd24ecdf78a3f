"""genfield sweep / preview on the command line, for what needs no model: listing a recipe's
numbers and refusing bad arguments in one line with exit code 2."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

RECIPE = str(Path(__file__).resolve().parent.parent / "recipes" / "demo-sorting-mat.gfr")


def _cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "genfield", *args], capture_output=True,
                          text=True, timeout=120)


def test_list_names_every_sweepable_number_with_its_unit():
    proc = _cli("sweep", RECIPE, "--list")
    assert proc.returncode == 0, proc.stderr
    rows = {line.split()[0]: line.split()[1:3] for line in proc.stdout.splitlines()}
    assert rows["camera.azimuth"] == ["angle", "random"]
    assert rows["camera.fov"] == ["angle", "fixed"]
    assert rows["washer.count"] == ["whole", "random"]
    assert rows["nut.appearance.w1"] == ["plain", "random"]


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["sweep", RECIPE], "--out is required"),
        (["sweep", RECIPE, "--vary", "camera.azimuth", "--out", "x.png"], "expected PARAM=VALUES"),
        (["sweep", RECIPE, "--vary", "a=1", "--zip", "--out", "x.png"], "--zip pairs"),
        (["sweep", RECIPE, "--vary", "a=1", "--vary", "b=1", "--vary", "c=1", "--out", "x.png"],
         "two axes"),
        (["sweep", RECIPE, "--steps", "5", "--out", "x.png"], "--steps is for model sweeps"),
        (["sweep", "no-such.gfr", "--out", "x.png"], "does not exist"),
        (["sweep", "no-such.gfm", "--shape", "a..b", "--vary", "x=1", "--out", "x.png"],
         "are for recipe sweeps"),
        (["preview", "no-such.gfr", "--out", "x.png"], "does not exist"),
        (["preview", RECIPE, "--columns", "0", "--out", "x.png"], "--columns must be >= 1"),
    ],
)
def test_bad_arguments_are_one_line(args, message, tmp_path):
    proc = subprocess.run([sys.executable, "-m", "genfield", *args], capture_output=True,
                          text=True, timeout=120, cwd=tmp_path)
    assert proc.returncode == 2, proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("genfield: error: "), proc.stderr
    assert message in lines[0]
