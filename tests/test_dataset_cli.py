"""``genfield render`` and ``genfield merge`` on a real recipe and a real (tiny) model file."""

from __future__ import annotations

import json

import pytest
from _dataset_doubles import RECIPE, tiny_model_file, tree

from genfield.cli import main


@pytest.fixture(scope="module")
def recipe(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cli")
    tiny_model_file(folder / "model.gfm")
    (folder / "tray.gfr").write_text(RECIPE)
    return folder / "tray.gfr"


@pytest.fixture(scope="module")
def whole(recipe):
    out = recipe.parent / "whole"
    assert main(["render", str(recipe), "--out", str(out), "--count", "5", "--seed", "4"]) == 0
    return out


def _one_error_line(capsys) -> str:
    err = [line for line in capsys.readouterr().err.splitlines() if line.startswith("genfield:")]
    assert len(err) == 1, err
    return err[0]


def test_render_writes_the_folder_and_reports(whole, capsys):
    manifest = json.loads((whole / "manifest.json").read_text())
    assert manifest["complete"] and manifest["count"] == 5 and manifest["seed"] == 4
    assert manifest["recipe"]["text"] == RECIPE
    assert manifest["model"]["name"] == "model.gfm"
    assert len(list((whole / "images").iterdir())) == 5


def test_an_occupied_folder_is_refused_in_one_line(recipe, whole, capsys):
    capsys.readouterr()
    assert main(["render", str(recipe), "--out", str(whole), "--count", "5", "--seed", "4"]) == 2
    assert "not empty" in _one_error_line(capsys)
    assert main(["render", str(recipe), "--out", str(whole), "--count", "5", "--seed", "4",
                 "--resume"]) == 0  # nothing to redo; the folder is checked and kept
    assert "0 rendered, 5 kept" in capsys.readouterr().out


def test_shards_merged_by_the_command_equal_the_whole(recipe, whole, tmp_path):
    for i in range(2):
        assert main(["render", str(recipe), "--out", str(tmp_path / f"s{i}"), "--count", "5",
                     "--seed", "4", "--shard", f"{i}/2"]) == 0
    assert main(["merge", str(tmp_path / "s0"), str(tmp_path / "s1"), "--out", str(tmp_path / "m")]) == 0
    assert tree(tmp_path / "m") == tree(whole)


@pytest.mark.parametrize("argv, words", [
    (["--shard", "2/2"], "--shard"),
    (["--shard", "one"], "--shard"),
    (["--workers", "2", "--cluster", "tcp://127.0.0.1:9"], "--workers"),
    (["--count", "0"], "--count"),
    (["--model", "missing.gfm"], "missing.gfm"),
])
def test_bad_options_are_one_line_errors(recipe, tmp_path, capsys, argv, words):
    assert main(["render", str(recipe), "--out", str(tmp_path / "ds"), *argv]) == 2
    assert words in _one_error_line(capsys)
    assert not (tmp_path / "ds").exists()  # refused before anything was written


def test_a_recipe_that_names_no_model_is_refused(tmp_path, capsys):
    (tmp_path / "r.gfr").write_text(RECIPE.replace('model "model.gfm"\n', ""))
    assert main(["render", str(tmp_path / "r.gfr"), "--out", str(tmp_path / "ds")]) == 2
    assert "names no model" in _one_error_line(capsys)


def test_an_unknown_code_name_is_refused_before_the_folder_is_made(recipe, tmp_path, capsys):
    (recipe.parent / "typo.gfr").write_text(RECIPE.replace('"cup-0000"', '"cup-000"'))
    assert main(["render", str(recipe.parent / "typo.gfr"), "--out", str(tmp_path / "ds")]) == 2
    line = _one_error_line(capsys)
    assert "typo.gfr:" in line and "cup-000" in line
    assert not (tmp_path / "ds").exists()
