"""The checker: canonical units, defaults, scopes, parameters, includes and the model path."""

from __future__ import annotations

import math
import subprocess
import sys

import pytest

from genfield.recipe import load_recipe, loads
from genfield.recipe import values as v


def check(text: str, tmp_path, name: str = "r.gfr"):
    return loads(text, path=tmp_path / name)


def inner(node):
    """The value node under a parameter wrapper."""
    return node.inner if isinstance(node, (v.Param, v.ParamVec)) else node


@pytest.mark.parametrize(
    ("text", "node"),
    [
        # lengths to metres, angles to radians (SI; 1 deg = pi/180 rad by definition)
        ("scale 3cm", v.Fixed(0.03)),
        ("scale 12mm", v.Fixed(0.012)),
        ("scale 1.5m", v.Fixed(1.5)),
        ("yaw 90deg", v.Fixed(math.pi / 2)),
        ("yaw 0.5rad", v.Fixed(0.5)),
        ("yaw 0", v.Fixed(0.0)),  # a bare 0 fits any kind of number
        ("yaw 0deg..360deg", v.Uniform(0.0, 2 * math.pi)),
        ("count 2 to 5", v.Whole(2, 5)),
        ("pitch normal 0deg sd 2deg clamp -4deg..4deg",
         v.Normal(0.0, math.radians(2), math.radians(-4), math.radians(4))),
        ("scale pick [1cm: 3, 2cm]", v.Pick((v.Fixed(0.01), v.Fixed(0.02)), (0.75, 0.25))),
        ("at (1cm, -2cm, 0)", v.Fixed((0.01, -0.02, 0.0))),
        ("at (1cm..2cm, 0, 5mm)", v.Tuple((v.Uniform(0.01, 0.02), v.Fixed(0.0), v.Fixed(0.005)))),
        ("at (0, 0, 0)..(1m, 2m, 3m)", v.Box((0.0, 0.0, 0.0), (1.0, 2.0, 3.0))),
    ],
)
def test_object_values_become_canonical_nodes(text, node, tmp_path):
    recipe = check(f'object cup {{\n  asset "cup-0000"\n  {text}\n}}\n', tmp_path)
    key = text.split()[0]
    assert inner(getattr(recipe.objects[0], key)) == node


def test_camera_defaults_and_units(tmp_path):
    cam = check("camera {\n  size 64x48\n  focal 120px\n}\n", tmp_path).camera
    assert (cam.width, cam.height, cam.fov, cam.orbit) == (64, 48, None, True)
    assert inner(cam.focal) == v.Fixed(120.0)
    assert inner(cam.distance) == v.Fixed(1.0)
    assert inner(cam.elevation) == v.Fixed(math.radians(30))
    assert inner(cam.azimuth) == v.Fixed(math.radians(45))
    assert inner(cam.up) == v.Fixed((0.0, 0.0, 1.0))
    look = check("camera {\n  position (1m, -1m, 50cm)\n}\n", tmp_path).camera
    assert not look.orbit and look.distance is None
    assert inner(look.position) == v.Fixed((1.0, -1.0, 0.5))
    assert inner(look.fov) == v.Fixed(math.radians(40))


def test_dataset_settings_and_defaults(tmp_path):
    d = check("dataset {\n  images 12\n  seed 4\n  train 0.5\n  test 0.5\n  outputs image, depth, "
              "depth\n}\n", tmp_path).dataset
    assert (d.count, d.seed, d.splits, d.outputs) == (12, 4, {"train": 0.5, "val": 0.0, "test": 0.5},
                                                      frozenset({"image", "depth"}))
    d = check("", tmp_path).dataset
    assert (d.count, d.seed, d.splits, d.outputs) == (
        100, 0, {"train": 0.8, "val": 0.1, "test": 0.1}, frozenset({"image", "mask"}))
    assert d.detail == 2.0 and check("dataset {\n  detail 1\n}\n", tmp_path).dataset.detail == 1.0


def test_detail_outside_its_range_is_an_error_at_the_value(tmp_path):
    from genfield.errors import RecipeError

    with pytest.raises(RecipeError, match="between 0.5 and 4") as caught:
        check("dataset {\n  detail 0.1\n}\n", tmp_path)
    assert caught.value.where.endswith("r.gfr:2:10")


def test_light_backdrop_and_layout(tmp_path):
    r = check("light {\n  direction (0, 0, 2)\n  shadows yes\n}\nbackdrop {\n  colour #ff0000\n"
              "  floor #000000\n}\nlayout {\n  apart no\n  gap 2mm\n  tries 9\n}\n", tmp_path)
    assert inner(r.light.direction) == v.Fixed((0.0, 0.0, 2.0)) and r.light.shadows
    assert r.backdrop.top == r.backdrop.bottom == v.Fixed((1.0, 0.0, 0.0))
    assert r.backdrop.floor == v.Fixed((0.0, 0.0, 0.0))
    assert (r.layout.apart, inner(r.layout.gap), r.layout.tries) == (False, v.Fixed(0.002), 9)
    grad = check("backdrop {\n  top #ffffff\n  bottom #000000..#202020\n}\n", tmp_path).backdrop
    assert grad.bottom == v.Blend((0.0, 0.0, 0.0), (32 / 255,) * 3) and grad.floor is None


def test_codes_joint_wearing_and_separate(tmp_path):
    r = check('object a {\n  asset "cup-0000"\n}\n'
              'object b {\n  asset "cup-0000" wearing prior\n}\n'
              'object c {\n  shape lerp ["x": 1, "y": 3]\n  appearance "z" shift dim 2 by 0.5\n}\n',
              tmp_path)
    a, b, c = r.objects
    assert a.joint == v.NamedCode(v.Fixed("cup-0000")) and a.shape is None
    assert b.joint is None and b.shape == v.NamedCode(v.Fixed("cup-0000"))
    assert b.appearance == v.PriorCode(v.Param("b.wearing.temperature", v.Fixed(1.0)))
    assert c.shape == v.MixCode(("x", "y"), (v.Param("c.shape.w1", v.Fixed(1.0)),
                                             v.Param("c.shape.w2", v.Fixed(3.0))), False)
    assert c.appearance == v.ShiftCode(v.NamedCode(v.Fixed("z")), 2,
                                       v.Param("c.appearance.dim2", v.Fixed(0.5)))


def test_classes_are_labels_in_order_of_first_appearance(tmp_path):
    r = check('object big {\n  asset "a"\n  label "nut"\n}\nobject washer {\n  asset "a"\n}\n'
              'object small {\n  asset "a"\n  label "nut"\n}\n', tmp_path)
    assert r.classes == ("nut", "washer")
    assert [o.label for o in r.objects] == ["nut", "washer", "nut"]


def test_constants_have_scopes_and_blocks_may_use_them_anywhere(tmp_path):
    r = check('object cup {\n  asset palette\n  yaw both\n}\n'
              'spin = 0deg..90deg per object\npalette = pick ["a", "b"]\ntilt = 1deg per image\n'
              "both = pick [spin, tilt] per object\n", tmp_path)
    scopes = {c.name: c.per_object for c in r.constants}
    assert scopes == {"spin": True, "palette": False, "tilt": False, "both": True}


def test_parameters_name_every_sweepable_number(tmp_path):
    r = check('tilt = 5deg\nspot = (1cm, 2cm)\nobject cup {\n  asset lerp ["a": 0..1, "b"] shift dim 1 by 0.1\n'
              "  on floor\n  at (0, 0)\n}\n", tmp_path)
    assert r.parameters() == [
        "tilt", "spot.x", "spot.y",
        "camera.fov", "camera.target.x", "camera.target.y", "camera.target.z",
        "camera.up.x", "camera.up.y", "camera.up.z", "camera.distance", "camera.elevation",
        "camera.azimuth", "light.elevation", "light.azimuth", "light.strength", "light.ambient",
        "layout.gap", "cup.count", "cup.asset.w1", "cup.asset.w2", "cup.asset.dim1",
        "cup.scale", "cup.yaw", "cup.pitch", "cup.roll", "cup.at.x", "cup.at.y",
    ]
    info = r.parameter("cup.asset.w1")
    assert (info.unit, info.random, info.source, info.per_object) == ("plain", True, "0..1", True)
    assert r.parameter("camera.azimuth").source == "45deg (default)"
    assert r.parameter("cup.count").whole


def test_the_default_light_matches_the_scene_default_direction(tmp_path):
    from genfield.recipe import draw_scene
    from genfield.scene import Light

    scene = draw_scene(check("", tmp_path), None, 0, 0)
    assert scene.light.direction == pytest.approx(Light().direction, abs=1e-3)


def test_includes_are_inlined_and_their_text_kept(tmp_path):
    (tmp_path / "common").mkdir()
    (tmp_path / "common" / "lamp.gfr").write_text("# the lamp\nlight {\n  strength 0.5\n}\n")
    (tmp_path / "top.gfr").write_text('include "common/lamp.gfr"\nmodel "m/x.gfm"\n')
    r = load_recipe(tmp_path / "top.gfr")
    assert inner(r.light.strength) == v.Fixed(0.5)
    assert r.files == (tmp_path / "top.gfr", tmp_path / "common" / "lamp.gfr")
    assert "# ---- included: " in r.text and "light {\n  strength 0.5" in r.text
    assert r.model_path == tmp_path / "m" / "x.gfm"
    assert load_recipe(tmp_path / "top.gfr", model=tmp_path / "other.gfm").model_path == \
        tmp_path / "other.gfm"


def test_a_recipe_without_a_model_has_none(tmp_path):
    assert check("", tmp_path).model_path is None


def test_equal_recipes_compare_equal_whatever_their_layout(tmp_path):
    a = check("x = 1cm # a\nobject cup {\n  asset \"a\"\n  scale x\n}\n", tmp_path)
    b = check("\n\nx   =   1cm\n\nobject cup {\n\n  scale x\n  asset \"a\"\n}\n", tmp_path, "other.gfr")
    assert a == b
    c = check("x = 2cm\nobject cup {\n  asset \"a\"\n  scale x\n}\n", tmp_path)
    assert a != c


def test_checking_does_not_import_torch():
    code = ("import sys\nfrom genfield.recipe import load_recipe, draw_scene\n"
            "r = load_recipe('recipes/kitchen-shelf.gfr')\ndraw_scene(r, None, 0, 0)\n"
            "from genfield.cli import main\nmain(['check', 'recipes/workshop-tray.gfr'])\n"
            "print('TORCH', 'torch' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert "TORCH False" in out.stdout


def test_the_reference_in_developers_md_names_every_block_and_setting():
    from genfield.recipe.schema import BLOCKS, OUTPUTS, TOP_SETTINGS

    text = open("DEVELOPERS.md", encoding="utf-8").read()
    section = text[text.index("## The recipe language"):]
    for kind, schema in BLOCKS.items():
        assert f"`{kind}" in section, kind
        for key in schema.settings:
            assert f"`{key}" in section or f" {key} " in section, (kind, key)
    for word in (*TOP_SETTINGS, *OUTPUTS):
        assert word in section, word


def test_fixed_settings_may_come_from_constants(tmp_path):
    r = check('n = 12\nsize = 64x48\nfile = "m.gfm"\nsh = yes\nk = 2\nmodel file\n'
              "dataset {\n  images n\n  seed pick [3]\n  train 1\n}\ncamera {\n  size size\n}\n"
              "light {\n  shadows sh\n}\nlayout {\n  tries k\n}\n"
              'object a {\n  asset "x"\n  label pick ["q"]\n}\nsweep {\n  a.yaw 0deg\n  index k\n}\n',
              tmp_path)
    assert (r.dataset.count, r.dataset.seed, r.camera.width, r.light.shadows, r.layout.tries) == \
        (12, 3, 64, True, 2)
    assert r.classes == ("q",) and r.sweeps[0].index == 2 and r.model_path == tmp_path / "m.gfm"


def test_codes_drawn_from_a_continuum_are_told_apart_from_picked_names(tmp_path):
    from genfield.recipe.summary import describe

    r = check('spin = 0deg..90deg per object\nw = 0..1 per object\nname = pick ["a", "b"]\n'
              'object picked {\n  asset name\n  yaw spin\n}\n'
              'object fixed_blend {\n  shape lerp ["a": 1, "b": 3]\n  appearance "a"\n}\n'
              'object blend {\n  shape lerp ["a": w, "b": 1]\n  appearance "a"\n}\n'
              'object painted {\n  asset "a" wearing prior\n}\n'
              'object moved {\n  shape "a" shift dim 0 by -0.2..0.2\n  appearance name\n}\n',
              tmp_path)
    line = next(x for x in describe(r).splitlines() if x.startswith("baked afresh"))
    # names (even picked ones) and fixed blends repeat, so their grids are cached; a drawn
    # appearance on a named shape is told apart (only its colour is computed again)
    assert "the shapes of blend, moved;" in line
    assert "the appearances of painted (on their known shapes: colour only)" in line
    alone = check('object a {\n  asset pick ["a", "b"]\n  yaw 0deg..90deg\n}\n', tmp_path)
    assert "baked afresh" not in describe(alone)


@pytest.mark.parametrize(
    ("node", "continuous"),
    [
        (v.Uniform(0.0, 1.0), True),
        (v.Uniform(1.0, 1.0), False),  # an empty range is one value
        (v.Whole(2, 5), False),
        (v.Pick((v.Fixed(0.01), v.Fixed(0.02)), (0.5, 0.5)), False),
        (v.Pick((v.Fixed(0.01), v.Uniform(0.0, 1.0)), (0.5, 0.5)), True),
        (v.Pick((v.Fixed(0.01), v.Uniform(0.0, 1.0)), (1.0, 0.0)), False),  # never drawn
        (v.NamedCode(v.Pick((v.Fixed("a"), v.Fixed("b")), (0.5, 0.5))), False),
        (v.PriorCode(v.Fixed(1.0)), True),
        (v.ConstantRef("w"), True),
    ],
)
def test_is_continuous(node, continuous):
    assert v.is_continuous(node, {"w"}) is continuous
