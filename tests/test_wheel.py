"""The wheel carries the grammar and the installed package finds it (not only a checkout)."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.slow
def test_grammar_is_found_from_an_installed_wheel(tmp_path):
    build = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation",
         "--wheel-dir", str(tmp_path / "dist"), str(ROOT)],
        capture_output=True, text=True, timeout=300,
    )
    assert build.returncode == 0, build.stderr
    (wheel,) = (tmp_path / "dist").glob("genfield-*.whl")
    site = tmp_path / "site"
    with zipfile.ZipFile(wheel) as zf:
        names = zf.namelist()
        assert "genfield/grammar/recipe.lark" in names
        zf.extractall(site)
    # Run from an empty folder with only the unpacked wheel on the path, so the checkout's
    # top-level grammar/ cannot be what is found.
    probe = subprocess.run(
        [sys.executable, "-c",
         "import genfield, genfield.paths as p; print(genfield.__file__); print(p.grammar_file())"],
        capture_output=True, text=True, cwd=tmp_path, timeout=60,
        env={"PYTHONPATH": str(site), "PATH": "/usr/bin:/bin"},
    )
    assert probe.returncode == 0, probe.stderr
    package_file, grammar = probe.stdout.strip().splitlines()
    assert package_file.startswith(str(site))
    assert grammar == str(site / "genfield" / "grammar" / "recipe.lark")
