"""The example recipes in recipes/: each checks, draws 50 scenes, and `genfield check` works."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from genfield.recipe import check_codes, draw_scene, load_recipe, sweep_frames
from genfield.scene import Scene
from tests.fuzz_recipes import toy_codebook

EXAMPLES = sorted(Path("recipes").glob("*.gfr"))
BOOK = toy_codebook()  # holds every built-in name the examples use: <family>-<index:04d>


def test_there_are_at_least_four_examples():
    assert len(EXAMPLES) >= 4


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_each_example_checks_and_draws(path):
    recipe = load_recipe(path)
    check_codes(recipe, BOOK)
    assert recipe.classes and recipe.objects
    for i in range(50):
        scene = draw_scene(recipe, BOOK, recipe.dataset.seed, i)
        assert {o.label for o in scene.objects} <= set(recipe.classes)
    for frame in sweep_frames(recipe) if recipe.sweeps else []:
        draw_scene(recipe, BOOK, recipe.dataset.seed, frame.index, frame.overrides)


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_genfield_check_summarises_and_shows_scenes(path, capsys):
    from genfield import cli

    assert cli.main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert out.startswith(f"recipe {path}")
    assert "classes (" in out and "random per image" in out
    assert cli.main(["check", str(path), "--show", "2"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert len(lines) == 2
    assert [Scene.from_json(line).index for line in lines] == [0, 1]
    assert cli.main(["check", str(path), "--format"]) == 0
    assert capsys.readouterr().out == path.read_text()  # the examples are kept formatted


def test_check_with_a_missing_model_is_a_usage_error(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "genfield", "check", "recipes/orbit-study.gfr",
                           "--model", str(tmp_path / "none.gfm")], capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 2
    assert proc.stderr.startswith("genfield: error: no model file ")


def test_show_json_is_plain_data():
    proc = subprocess.run([sys.executable, "-m", "genfield", "check", "recipes/demo-workbench.gfr",
                           "--show", "1"], capture_output=True, text=True, timeout=120, check=True)
    scene = json.loads(proc.stdout)
    assert scene["index"] == 0 and scene["seed"] == 1 and scene["objects"]
