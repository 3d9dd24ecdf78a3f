"""Drawing concrete scenes: distributions (scipy.stats), determinism, placement (trimesh),
codes through a CodeBook (Shoemake's slerp, Buss-Fillmore spherical means), overrides."""

from __future__ import annotations

import json
import math
import subprocess
import sys

import numpy as np
import pytest
import trimesh
from scipy import stats

from genfield.recipe import draw_scene, loads
from genfield.recipe.codes import slerp_many
from genfield.render.camera import focal_from_fov, orbit_position
from genfield.scene import Scene
from genfield.seeds import rng
from tests.fuzz_recipes import toy_codebook

BOOK = toy_codebook()


def recipe(body: str, tmp_path, head: str = ""):
    return loads(f"{head}layout {{\n  apart no\n}}\nobject a {{\n  asset \"cup-0000\"\n{body}}}\n",
                 path=tmp_path / "r.gfr")


def many(body: str, tmp_path, n: int = 1000, head: str = "") -> list:
    """The objects of one scene holding n instances of object a (placement off)."""
    return list(draw_scene(recipe(f"  count {n}\n{body}", tmp_path, head), BOOK, 1, 0).objects)


# ---- distributions against scipy.stats ---------------------------------------------------
# Each test draws a few thousand values; a p-value under 1e-3 would be a real fault (these are
# fixed seeds, so the numbers are the same on every run: the tests cannot flicker).


def test_uniform_draws_pass_kolmogorov_smirnov(tmp_path):
    yaws = [o.pose.yaw_pitch_roll[0] for o in many("  yaw 10deg..50deg\n", tmp_path)]
    lo, hi = math.radians(10), math.radians(50)
    assert min(yaws) >= lo and max(yaws) <= hi
    assert stats.kstest(yaws, stats.uniform(loc=lo, scale=hi - lo).cdf).pvalue > 1e-3


def test_normal_draws_pass_kolmogorov_smirnov(tmp_path):
    scales = [o.pose.scale for o in many("  scale normal 5cm sd 5mm clamp 1cm..9cm\n", tmp_path)]
    assert stats.kstest(scales, stats.norm(loc=0.05, scale=0.005).cdf).pvalue > 1e-3
    # a wrong spread is caught: the same values against sd 6mm fail
    assert stats.kstest(scales, stats.norm(loc=0.05, scale=0.006).cdf).pvalue < 1e-3


def test_a_clamp_piles_the_tails_on_its_ends(tmp_path):
    pitches = np.array([o.pose.yaw_pitch_roll[1]
                        for o in many("  pitch normal 0deg sd 10deg clamp -5deg..20deg\n", tmp_path)])
    lo, hi = math.radians(-5), math.radians(20)
    assert pitches.min() == pytest.approx(lo) and pitches.max() <= hi
    low_share = stats.norm(0, math.radians(10)).cdf(lo)  # P(x < -5deg) for sd 10deg
    at_lo = int(np.isclose(pitches, lo).sum())
    assert stats.binomtest(at_lo, len(pitches), low_share).pvalue > 1e-3


def test_whole_ranges_and_picks_follow_their_weights_chi_square(tmp_path):
    counts = [draw_scene(recipe("  count 1 to 4\n", tmp_path), None, 2, i).objects.__len__()
              for i in range(400)]
    observed = np.bincount(counts, minlength=5)[1:]
    assert stats.chisquare(observed).pvalue > 1e-3  # equally likely 1, 2, 3, 4
    scales = [o.pose.scale for o in many("  scale pick [1cm: 1, 2cm: 3]\n", tmp_path)]
    observed = [sum(np.isclose(scales, 0.01)), sum(np.isclose(scales, 0.02))]
    assert stats.chisquare(observed, [len(scales) / 4, 3 * len(scales) / 4]).pvalue > 1e-3


def test_per_image_constants_are_shared_and_per_object_ones_are_not(tmp_path):
    head = "shared = 0deg..90deg\nown = 0deg..90deg per object\n"
    objs = many("  yaw shared\n  pitch own\n", tmp_path, n=50, head=head)
    assert len({o.pose.yaw_pitch_roll[0] for o in objs}) == 1
    assert len({o.pose.yaw_pitch_roll[1] for o in objs}) == 50


# ---- reproducibility ---------------------------------------------------------------------


def test_a_scene_is_the_same_in_any_order_and_alone(tmp_path):
    r = loads(open("recipes/workshop-tray.gfr").read(), path="recipes/workshop-tray.gfr")
    forward = [draw_scene(r, BOOK, 11, i).to_json() for i in range(8)]
    backward = [draw_scene(r, BOOK, 11, i).to_json() for i in reversed(range(8))][::-1]
    assert forward == backward
    assert draw_scene(r, BOOK, 11, 5).to_json() == forward[5]
    assert draw_scene(r, BOOK, 12, 5).to_json() != forward[5]


def test_a_scene_is_the_same_in_another_process():
    code = ("from genfield.recipe import load_recipe, draw_scene\n"
            "from tests.fuzz_recipes import toy_codebook\n"
            "r = load_recipe('recipes/kitchen-shelf.gfr')\n"
            "print(draw_scene(r, toy_codebook(), 3, 7).to_json())")
    runs = [subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                           timeout=120, check=True).stdout for _ in range(2)]
    from genfield.recipe import load_recipe

    here = draw_scene(load_recipe("recipes/kitchen-shelf.gfr"), BOOK, 3, 7).to_json()
    assert runs[0] == runs[1] == here + "\n"


def test_scenes_go_through_json_without_loss():
    from genfield.recipe import load_recipe

    for name in ("kitchen-shelf", "conveyor-line", "workshop-tray"):
        scene = draw_scene(load_recipe(f"recipes/{name}.gfr"), BOOK, 4, 2)
        assert Scene.from_json(scene.to_json()) == scene
        assert json.loads(Scene.from_json(scene.to_json()).to_json()) == json.loads(scene.to_json())


def test_an_override_changes_only_its_number(tmp_path):
    r = loads(open("recipes/orbit-study.gfr").read(), path="recipes/orbit-study.gfr")
    base = draw_scene(r, BOOK, 5, 3).to_dict()
    turned = draw_scene(r, BOOK, 5, 3, {"camera.azimuth": 1.0}).to_dict()
    assert turned["camera"] != base["camera"]
    for key in ("objects", "light", "backdrop"):
        assert turned[key] == base[key]
    assert turned["values"]["camera.azimuth"] == 1.0


# ---- placement ---------------------------------------------------------------------------


def _box_bounds(pose) -> np.ndarray:
    """(2, 3) world bounds of the posed object cube, by trimesh (the outside reference)."""
    cube = trimesh.creation.box(extents=(2.0, 2.0, 2.0))
    cube.apply_transform(pose.object_to_world())
    return cube.bounds


def test_objects_on_the_floor_touch_it_with_their_lowest_corner(tmp_path):
    objs = many("  yaw 0deg..360deg\n  pitch -80deg..80deg\n  roll -80deg..80deg\n"
                "  scale 1cm..5cm\n  on floor\n  at (-1m..1m, -1m..1m)\n", tmp_path, n=200)
    for o in objs:
        assert _box_bounds(o.pose)[0, 2] == pytest.approx(0.0, abs=1e-12)


def test_objects_inside_a_region_stay_in_it_in_any_rotation(tmp_path):
    objs = many("  yaw 0deg..360deg\n  pitch -30deg..30deg\n  scale 1cm..3cm\n"
                "  inside (-20cm, -10cm, 0)..(20cm, 10cm, 30cm)\n", tmp_path, n=300)
    lo, hi = np.array([-0.2, -0.1, 0.0]), np.array([0.2, 0.1, 0.3])
    for o in objs:
        bounds = _box_bounds(o.pose)
        assert np.all(bounds[0] >= lo - 1e-12) and np.all(bounds[1] <= hi + 1e-12)
        # the bounding sphere is inside too, so any other rotation would be as well
        r = math.sqrt(3) * o.pose.scale
        assert np.all(o.pose.t - r >= lo - 1e-12) and np.all(o.pose.t + r <= hi + 1e-12)


def test_a_yaw_sweep_turns_an_object_on_the_spot(tmp_path):
    r = recipe("  yaw 0deg\n  scale 2cm\n  on floor\n  inside (-20cm, -20cm)..(20cm, 20cm)\n",
               tmp_path)
    poses = [draw_scene(r, None, 3, 0, {"a.yaw": y}).objects[0].pose for y in (0.0, 0.7, 2.0)]
    assert len({p.translation for p in poses}) == 1


def test_objects_kept_apart_do_not_touch_by_bounding_spheres():
    from genfield.recipe import load_recipe

    r = load_recipe("recipes/workshop-tray.gfr")
    gap = 0.005  # the recipe's layout gap
    for i in range(20):
        objs = draw_scene(r, None, 11, i).objects
        for a in objs:
            for b in objs:
                if a.id < b.id:
                    d = np.linalg.norm(a.pose.t - b.pose.t)
                    assert d >= math.sqrt(3) * (a.pose.scale + b.pose.scale) + gap


# ---- codes --------------------------------------------------------------------------------


def codes_of(asset_lines: str, tmp_path, seed: int = 1):
    r = loads(f"object a {{\n{asset_lines}}}\n", path=tmp_path / "r.gfr")
    (obj,) = draw_scene(r, BOOK, seed, 0).objects
    return obj.shape, obj.appearance


def row(name: str):
    i = BOOK.index(name)
    return BOOK.shape[i].astype(np.float64), BOOK.appearance[i].astype(np.float64)


def test_a_named_asset_gives_both_of_its_codes(tmp_path):
    shape, appearance = codes_of('  asset "cup-0002"\n', tmp_path)
    assert np.array_equal(shape.array, BOOK.shape[BOOK.index("cup-0002")])
    assert np.array_equal(appearance.array, BOOK.appearance[BOOK.index("cup-0002")])
    assert shape.expression == appearance.expression == {"kind": "named", "name": "cup-0002"}


def test_shape_of_one_asset_with_the_appearance_of_another_in_one_line(tmp_path):
    shape, appearance = codes_of('  asset "cup-0000" wearing "bowl-0001"\n', tmp_path)
    assert np.array_equal(shape.array, BOOK.shape[BOOK.index("cup-0000")])
    assert np.array_equal(appearance.array, BOOK.appearance[BOOK.index("bowl-0001")])


def test_a_joint_prior_draw_is_the_codebooks_own_from_the_codes_stream(tmp_path):
    shape, appearance = codes_of("  asset prior temperature 0.7\n", tmp_path, seed=9)
    s, a = BOOK.sample_prior(rng(9, 0, "codes", 0, 0), 0.7)  # block 0, instance 0
    assert np.allclose(shape.array, s) and np.allclose(appearance.array, a)
    assert shape.expression == {"kind": "prior", "temperature": 0.7}


def test_lerp_weights_are_normalised(tmp_path):
    shape, _ = codes_of('  shape lerp ["cup-0000": 1, "cup-0001": 3]\n  appearance "cup-0000"\n',
                        tmp_path)
    expect = 0.25 * row("cup-0000")[0] + 0.75 * row("cup-0001")[0]
    assert np.allclose(shape.array, expect, atol=1e-6)
    assert shape.expression == {"kind": "mix", "names": ["cup-0000", "cup-0001"],
                                "weights": [0.25, 0.75], "spherical": False}


def test_slerp_of_two_codes_is_shoemakes_formula():
    # Shoemake (1985): slerp(p0, p1; t) = sin((1-t) W)/sin W p0 + sin(t W)/sin W p1, for unit p0, p1
    g = np.random.default_rng(0)
    p0, p1 = (x / np.linalg.norm(x) for x in g.normal(size=(2, 8)))
    w = math.acos(float(p0 @ p1))
    for t in (0.0, 0.2, 0.5, 0.9):
        expect = math.sin((1 - t) * w) / math.sin(w) * p0 + math.sin(t * w) / math.sin(w) * p1
        got = slerp_many(np.stack([3 * p0, 3 * p1]), np.array([1 - t, t]))
        assert np.allclose(got, 3 * expect, atol=1e-9)


def test_slerp_of_three_codes_is_a_weighted_spherical_mean():
    # Buss and Fillmore (2001): the mean p satisfies sum_i w_i log_p(u_i) = 0 on the sphere.
    g = np.random.default_rng(1)
    vecs = g.normal(size=(3, 6))
    w = np.array([0.2, 0.5, 0.3])
    got = slerp_many(vecs, w)
    p = got / np.linalg.norm(got)
    units = vecs / np.linalg.norm(vecs, axis=1, keepdims=True)
    theta = np.arccos(np.clip(units @ p, -1, 1))
    logs = (theta / np.sin(theta))[:, None] * (units - np.cos(theta)[:, None] * p)
    assert np.linalg.norm(w @ logs) < 1e-10
    assert np.linalg.norm(got) == pytest.approx(w @ np.linalg.norm(vecs, axis=1))


def test_slerp_refuses_codes_that_cancel(tmp_path):
    with pytest.raises(ValueError, match="opposite"):
        slerp_many(np.array([[1.0, 0.0], [-1.0, 0.0]]), np.array([0.5, 0.5]))


def test_a_shift_moves_one_dimension(tmp_path):
    shape, appearance = codes_of('  asset "cup-0001" shift dim 7 by 0.5\n', tmp_path)
    joint = np.concatenate(row("cup-0001"))
    joint[7] += 0.5  # dim 7 of the joint code is appearance dim 1 (shape has 6)
    assert np.allclose(np.concatenate([shape.array, appearance.array]), joint, atol=1e-6)
    assert shape.expression == {"kind": "shift", "base": {"kind": "named", "name": "cup-0001"},
                                "dim": 7, "by": 0.5}


def test_an_explicit_vector_is_used_as_written(tmp_path):
    shape, appearance = codes_of("  shape (1, 2, 3, 4, 5, 6)\n  appearance prior temperature 0\n",
                                 tmp_path)
    assert shape.vector == (1.0, 2.0, 3.0, 4.0, 5.0, 6.0)
    assert np.allclose(appearance.array, 0.0)  # temperature 0: the prior's mean


def test_without_a_codebook_codes_stay_expressions(tmp_path):
    r = loads('object a {\n  asset pick ["x-1", "y-2"]\n}\n', path=tmp_path / "r.gfr")
    (obj,) = draw_scene(r, None, 0, 0).objects
    assert obj.shape.vector == () and obj.shape.expression["name"] in ("x-1", "y-2")


# ---- camera, light, backdrop -------------------------------------------------------------


def test_the_orbit_camera_sits_where_orbit_position_says(tmp_path):
    r = loads("camera {\n  size 80x60\n  fov 50deg\n  target (0, 0, 5cm)\n  distance 70cm\n"
              "  elevation 30deg\n  azimuth 120deg\n}\n", path=tmp_path / "r.gfr")
    cam = draw_scene(r, None, 0, 0).camera
    expect = orbit_position((0, 0, 0.05), 0.7, math.radians(30), math.radians(120))
    assert np.allclose(cam.position, expect, atol=1e-12)
    assert cam.fx == pytest.approx(focal_from_fov(80, 50.0))
    assert (cam.width, cam.height, cam.cx, cam.cy) == (80, 60, 40.0, 30.0)


def test_light_by_angles_and_backdrop_colours(tmp_path):
    r = loads("light {\n  elevation 90deg\n  azimuth 10deg\n  strength 2\n}\n"
              "backdrop {\n  top #ff0000\n  bottom #0000ff\n  floor #808080\n}\n",
              path=tmp_path / "r.gfr")
    scene = draw_scene(r, None, 0, 0)
    assert np.allclose(scene.light.direction, (0.0, 0.0, 1.0), atol=1e-12)
    assert scene.light.strength == 2.0
    assert scene.backdrop.top_srgb == (1.0, 0.0, 0.0) and scene.backdrop.bottom_srgb == (0.0, 0.0, 1.0)
    assert scene.backdrop.floor and scene.backdrop.floor_srgb == (128 / 255,) * 3
