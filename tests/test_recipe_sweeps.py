"""Sweeps: strips, grids and zips from sweep blocks and from --vary, in canonical units."""

from __future__ import annotations

import math

import pytest

from genfield.errors import RecipeError
from genfield.recipe import draw_scene, loads, sweep_frames

BASE = 'object cup {\n  asset "cup-0000"\n  yaw 0deg..360deg\n}\n'


def check(text: str, tmp_path):
    return loads(BASE + text, path=tmp_path / "r.gfr")


def test_a_strip_from_a_sweep_block(tmp_path):
    r = check("sweep turn {\n  cup.yaw 0deg..90deg steps 3\n  index 4\n}\n", tmp_path)
    frames = sweep_frames(r)
    assert [f.overrides for f in frames] == [{"cup.yaw": 0.0}, {"cup.yaw": math.pi / 4},
                                             {"cup.yaw": math.pi / 2}]
    assert [f.label for f in frames] == ["cup.yaw=0deg", "cup.yaw=45deg", "cup.yaw=90deg"]
    assert [f.cell for f in frames] == [(0, 0), (0, 1), (0, 2)]
    assert {f.index for f in frames} == {4} and {f.sweep for f in frames} == {"turn"}


def test_two_parameters_make_a_grid_first_down_the_rows(tmp_path):
    r = check("sweep {\n  cup.scale 1cm, 2cm\n  camera.elevation 10deg, 20deg, 30deg\n}\n", tmp_path)
    frames = sweep_frames(r)
    assert len(frames) == 6
    assert frames[4].cell == (1, 1)
    assert frames[4].overrides == {"cup.scale": 0.02, "camera.elevation": math.radians(20)}
    assert frames[4].label == "cup.scale=2cm, camera.elevation=20deg"
    assert frames[0].sweep == "sweep1"


def test_zip_walks_two_lists_together(tmp_path):
    r = check("sweep {\n  cup.scale 1cm, 2cm\n  camera.distance 50cm, 1.5m\n  mode zip\n}\n",
              tmp_path)
    frames = sweep_frames(r)
    assert [f.overrides for f in frames] == [{"cup.scale": 0.01, "camera.distance": 0.5},
                                             {"cup.scale": 0.02, "camera.distance": 1.5}]
    assert [f.label for f in frames] == ["cup.scale=1cm, camera.distance=50cm",
                                         "cup.scale=2cm, camera.distance=1.5m"]


def test_vary_takes_recipe_text_or_canonical_numbers(tmp_path):
    r = check("", tmp_path)
    by_text = sweep_frames(r, [("cup.yaw", "0deg..180deg steps 3")])
    by_list = sweep_frames(r, [("cup.yaw", ["0deg", "90deg", "3.141592653589793rad"])])
    by_numbers = sweep_frames(r, [("cup.yaw", [0.0, math.pi / 2, math.pi])])
    assert [f.overrides for f in by_text] == [f.overrides for f in by_numbers]
    assert [f.overrides["cup.yaw"] for f in by_list] == pytest.approx([0, math.pi / 2, math.pi])
    grid = sweep_frames(r, [("cup.count", ["1.0", "2"]), ("cup.scale", "1cm, 2cm")], index=3)
    assert [f.overrides for f in grid][1] == {"cup.count": 1.0, "cup.scale": 0.02}
    assert {f.index for f in grid} == {3} and grid[1].label == "cup.count=1, cup.scale=2cm"


def test_vary_checks_names_units_and_bounds(tmp_path):
    r = check("", tmp_path)
    with pytest.raises(RecipeError, match=r"unknown parameter 'cup.yw' \(did you mean 'cup.yaw'\?\)"):
        sweep_frames(r, [("cup.yw", "0deg")])
    with pytest.raises(RecipeError, match=r"cup.yaw needs an angle \(deg or rad\): 30 has no unit"):
        sweep_frames(r, [("cup.yaw", "30")])
    with pytest.raises(RecipeError, match="cup.scale must be > 0, got -1cm"):
        sweep_frames(r, [("cup.scale", "-1cm")])
    with pytest.raises(RecipeError, match="cup.scale must be > 0"):
        sweep_frames(r, [("cup.scale", [-0.01])])
    with pytest.raises(RecipeError, match="cup.count must be a whole number"):
        sweep_frames(r, [("cup.count", ["1.5"])])
    with pytest.raises(RecipeError, match="zipped lists must be as long as each other"):
        sweep_frames(r, [("cup.yaw", "0deg, 1deg"), ("cup.scale", "1cm")], zipped=True)
    with pytest.raises(RecipeError, match="the recipe has no sweep block"):
        sweep_frames(r)


def test_a_bad_vary_value_points_at_its_column_in_param_equals_values(tmp_path):
    # the values are read as the line "PARAM VALUES", so a column counts as in "PARAM=VALUES"
    r = check("", tmp_path)
    with pytest.raises(RecipeError) as caught:
        sweep_frames(r, [("cup.yaw", "0..90deg:3")])
    assert caught.value.where == "--vary:1:17" and "got ':'" in caught.value.message
    assert "cup.yaw=0..90deg:3"[17 - 1] == ":"


def test_all_sweep_blocks_or_one_by_name(tmp_path):
    r = check("sweep a {\n  cup.yaw 0deg, 1deg\n}\nsweep b {\n  camera.fov 30deg\n}\n", tmp_path)
    assert [f.sweep for f in sweep_frames(r)] == ["a", "a", "b"]
    assert [f.sweep for f in sweep_frames(r, name="b")] == ["b"]
    with pytest.raises(RecipeError, match=r"unknown sweep 'c'"):
        sweep_frames(r, name="c")


def test_frames_hold_everything_but_the_swept_number(tmp_path):
    r = loads(open("recipes/orbit-study.gfr").read(), path="recipes/orbit-study.gfr")
    frames = [f for f in sweep_frames(r) if f.sweep == "dimension"]
    scenes = [draw_scene(r, None, 5, f.index, f.overrides) for f in frames]
    exprs = [s.objects[0].shape.expression for s in scenes]
    assert [e["by"] for e in exprs] == [-1.0, -0.5, 0.0, 0.5, 1.0]
    assert len({s.camera for s in scenes}) == 1  # the camera's random draws held at index 3
    assert scenes[0].values["nudge"] == -1.0
