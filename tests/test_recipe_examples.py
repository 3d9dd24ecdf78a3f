"""The example recipes in recipes/: each checks, draws 50 scenes, and `genfield check` works."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from genfield.recipe import check_codes, draw_scene, load_recipe, loads, sweep_frames
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
    formatted = capsys.readouterr().out
    assert loads(formatted, path=path) == load_recipe(path)


def test_check_with_a_missing_model_is_a_usage_error(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "genfield", "check", "recipes/orbit-study.gfr",
                           "--model", str(tmp_path / "none.gfm")], capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 2
    assert proc.stderr.startswith("genfield: error: no model file ")


def test_show_json_is_plain_data():
    proc = subprocess.run([sys.executable, "-m", "genfield", "check", "recipes/workbench.gfr",
                           "--show", "1"], capture_output=True, text=True, timeout=120, check=True)
    scene = json.loads(proc.stdout)
    assert scene["index"] == 0 and scene["seed"] == 1 and scene["objects"]


def _model_file(path: Path) -> Path:
    """A model file holding only the toy code table (the checker reads nothing else)."""
    from genfield.field.codebook import codebook_tensors
    from genfield.field.modelfile import write_model_file

    path.parent.mkdir(parents=True, exist_ok=True)
    write_model_file(path, codebook_tensors(BOOK), {
        "config": {}, "names": list(BOOK.names), "families": list(BOOK.families),
        "sources": [], "prior": {}, "metrics": {}})
    return path


def test_check_reads_the_models_code_names(tmp_path, capsys):
    from genfield import cli

    recipe = tmp_path / "r.gfr"
    recipe.write_text('model "models/m.gfm"\nobject cup {\n  asset "cup-0001"\n}\n')
    _model_file(tmp_path / "models" / "m.gfm")  # the recipe's own model, found and used
    assert cli.main(["check", str(recipe)]) == 0
    assert "(code names checked)" in capsys.readouterr().out
    assert cli.main(["check", str(recipe), "--show", "1"]) == 0
    scene = Scene.from_json(capsys.readouterr().out)
    assert scene.objects[0].shape.vector == tuple(float(x) for x in BOOK.shape[BOOK.index("cup-0001")])
    recipe.write_text('object cup {\n  asset "cpu-0001"\n}\n')
    other = _model_file(tmp_path / "elsewhere.gfm")
    assert cli.main(["check", str(recipe), "--model", str(other)]) == 2
    err = capsys.readouterr().err.splitlines()[0]
    assert err == (f"genfield: error: {recipe}:2:9: the model has no code named 'cpu-0001' "
                   "(did you mean 'cup-0001'?)")


def test_checking_against_a_model_file_does_not_import_torch(tmp_path):
    (tmp_path / "r.gfr").write_text('model "m.gfm"\nobject cup {\n  asset "cup-0001"\n}\n')
    _model_file(tmp_path / "m.gfm")
    code = ("import sys\nfrom genfield.cli import main\n"
            f"assert main(['check', {str(tmp_path / 'r.gfr')!r}, '--show', '1']) == 0\n"
            "print('TORCH', 'torch' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip().endswith("TORCH False")
