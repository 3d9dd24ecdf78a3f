"""Recipe sweeps and previews on analytic stand-in fields: --vary, sweep blocks, axes, frames."""

from __future__ import annotations

import json

import numpy as np
import pytest
import torch
from skimage.transform import rotate

from genfield.errors import RecipeError
from genfield.recipe import load_recipe
from genfield.sheets.recipes import Loaded, recipe_preview, recipe_sweep
from tests._sheet_doubles import BlendModel

torch.set_num_threads(1)

ONE_OBJECT = """\
# one object seen from (almost) straight above, for sweep tests
model "blend.gfm"

dataset {
  images 6
  seed 4
}

camera {
  size 96x96
  fov 40deg
  target (0, 0, 0)
  distance 2.7m
  elevation 89.5deg
  azimuth 0deg
}

object thing {
  shape "pair"
  appearance lerp ["ball": 1, "ring": 0]
  scale 0.5m
  at (0, 0, 0)
}

sweep mix {
  thing.appearance.w1 1..0 steps 5
  thing.appearance.w2 0..1 steps 5
  mode zip
}
"""

SCATTER = """\
model "blend.gfm"
spin = 0deg..360deg per object

dataset {
  images 4
  seed 2
}

camera {
  size 96x72
  fov 50deg
  target (0, 0, 0)
  distance 2.4m
  elevation 40deg..60deg
  azimuth 0deg..360deg
}

backdrop {
  floor #808080
}

object ball {
  count 1 to 2
  asset "ball"
  scale 12cm
  on floor
  inside (-80cm, -80cm)..(80cm, 80cm)
}

object brick {
  count 1
  asset pick ["brick", "post"]
  scale 15cm
  yaw spin
  on floor
  inside (-80cm, -80cm)..(80cm, 80cm)
}
"""


@pytest.fixture(scope="module")
def model() -> BlendModel:
    return BlendModel()


def _loaded(tmp_path, text: str, model: BlendModel, name: str = "r.gfr") -> Loaded:
    path = tmp_path / name
    path.write_text(text)
    return Loaded(load_recipe(path, model=tmp_path / "blend.gfm"), model, tmp_path / "blend.gfm")


def test_the_recipes_own_zipped_weight_sweep_moves_colour_from_a_to_b(tmp_path, model):
    (sweep,) = recipe_sweep(_loaded(tmp_path, ONE_OBJECT, model), [])
    assert sweep.column_title == "thing.appearance.w1 & thing.appearance.w2"
    assert sweep.column_labels[0] == "1, 0" and sweep.column_labels[-1] == "0, 1"
    means = np.array([o.rgb[o.alpha > 0.99].mean(axis=0) for o in sweep.outputs])
    along = means @ (model.colour("ring") - model.colour("ball"))
    assert (np.diff(along) > 0).all(), along
    exprs = [s.objects[0].appearance.expression for s in sweep.scenes]
    assert [e["weights"] for e in exprs][2] == [0.5, 0.5]
    sheet = sweep.sheet()
    assert "sweep mix" in sheet.marks_of("title")[0].text


def test_vary_camera_azimuth_turns_the_depth_map_and_keeps_the_area(tmp_path, model):
    loaded = _loaded(tmp_path, ONE_OBJECT, model)
    (sweep,) = recipe_sweep(loaded, [("camera.azimuth", "0deg..90deg steps 4")])
    assert sweep.column_labels == ("0deg", "30deg", "60deg", "90deg")
    assert sweep.column_title == "camera.azimuth"
    areas = np.array([(o.instance_ids > 0).sum() for o in sweep.outputs])
    assert (np.abs(areas / areas.mean() - 1) < 0.02).all(), areas
    d0 = np.where(np.isfinite(sweep.outputs[0].depth), sweep.outputs[0].depth, 0.0)
    for angle, out in zip((30, 60, 90), sweep.outputs[1:], strict=True):
        expect = rotate(d0, -angle, order=0, preserve_range=True)  # clockwise on screen
        mask = out.instance_ids > 0
        iou = ((expect > 0) & mask).sum() / ((expect > 0) | mask).sum()
        assert iou > 0.95, (angle, iou)
    # only the camera moved: the scenes' objects are identical
    assert all(s.objects == sweep.scenes[0].objects for s in sweep.scenes)


def test_two_parameters_make_a_grid_with_units_on_both_axes(tmp_path, model):
    loaded = _loaded(tmp_path, SCATTER, model)
    (sweep,) = recipe_sweep(loaded, [("camera.elevation", "20deg, 50deg"),
                                     ("brick.yaw", "0deg..90deg steps 3")], index=1)
    assert sweep.row_title == "camera.elevation" and sweep.row_labels == ("20deg", "50deg")
    assert sweep.column_labels == ("0deg", "45deg", "90deg")
    sheet = sweep.sheet()
    assert len(sheet.tiles) == 6
    assert [m.text for m in sheet.marks_of("row")] == ["20deg", "50deg"]
    # row-major: the first row holds elevation 20deg
    assert all(f["camera.elevation"] == pytest.approx(np.radians(20)) for f in sweep.factors[:3])
    assert {s.index for s in sweep.scenes} == {1}
    # the swept object turned and nothing else about it changed
    bricks = [next(o for o in s.objects if o.label == "brick") for s in sweep.scenes[:3]]
    assert [b.pose.yaw_pitch_roll[0] for b in bricks] == pytest.approx(np.radians([0, 45, 90]))
    assert len({b.pose.translation for b in bricks}) == 1


def test_zip_pairs_values_and_frames_record_their_factors(tmp_path, model):
    loaded = _loaded(tmp_path, SCATTER, model)
    (sweep,) = recipe_sweep(loaded, [("camera.distance", "2.2m..2.6m steps 3"),
                                     ("light.strength", "0.5, 1, 1.5")], zipped=True)
    assert sweep.row_labels == () and len(sweep.outputs) == 3
    files = sweep.write_frames(tmp_path / "frames")
    assert len(files) == 6
    rec = json.loads((tmp_path / "frames" / "0002.json").read_text())
    assert rec["factors"] == {"camera.distance": pytest.approx(2.6), "light.strength": 1.5}
    assert rec["seed"] == 2 and rec["recipe"] == "r.gfr"
    assert rec["scene"]["light"]["strength"] == 1.5


def test_a_bad_parameter_is_a_recipe_error_with_a_suggestion(tmp_path, model):
    loaded = _loaded(tmp_path, SCATTER, model)
    with pytest.raises(RecipeError) as err:
        recipe_sweep(loaded, [("camera.azimut", "0deg..90deg steps 3")])
    assert "camera.azimuth" in err.value.one_line()
    with pytest.raises(RecipeError):
        recipe_sweep(loaded, [("camera.fov", "0deg..200deg steps 3")])  # outside (0, 180)


def test_preview_draws_labelled_tiles_of_the_first_images(tmp_path, model):
    loaded = _loaded(tmp_path, SCATTER, model)
    sheet = recipe_preview(loaded, 16, columns=2)
    assert len(sheet.tiles) == 4  # the recipe has 4 images
    for box in sheet.tiles:
        assert box[2] - box[0] == 96 + 2 + 48 and box[3] - box[1] == 72
    captions = [m.text for m in sheet.marks_of("caption")]
    assert captions[0].startswith("#0: ") and "visible" in captions[0]
    assert "seed 2" in sheet.marks_of("title")[0].text
