"""render_scene end to end: composition rules, labels, options, and the per-sample reference."""

from __future__ import annotations

import math

import numpy as np
import pytest
import torch

import genfield
from genfield.errors import UsageError
from genfield.render.analytic import AnalyticModel, demo_shapes
from genfield.render.cache import GridCache
from genfield.render.camera import look_at, make_camera, orbit_position
from genfield.render.naive import render_per_sample
from genfield.render.options import RenderOptions, auto_resolution
from genfield.render.renderer import cube_pixels, render_scene
from genfield.scene import Backdrop, CodeChoice, Light, Pose, Scene, SceneObject

torch.set_num_threads(1)
MODEL = AnalyticModel(demo_shapes())
CAMERA = make_camera(64, 64, look_at(orbit_position((0, 0, 0.1), 0.75, 0.6, -1.0), (0, 0, 0.1)), fov_deg=50.0)


def obj(i: int, pose: Pose, oid: int, shape=None) -> SceneObject:
    s = MODEL.shape_code(i) if shape is None else shape
    return SceneObject(oid, MODEL.shapes[i].name, CodeChoice(tuple(s)), CodeChoice(tuple(MODEL.appearance_code(i))),
                       pose)


def scene(objects, **kw) -> Scene:
    return Scene(0, 0, kw.pop("camera", CAMERA), tuple(objects), kw.pop("light", Light()),
                 kw.pop("backdrop", Backdrop(floor=True)))


def render(s: Scene, **opts):
    return render_scene(MODEL, s, options=RenderOptions(threads=1, **opts), cache=GridCache(1 << 28, disk=False))


POSE_A = Pose.from_ypr((0.05, 0.0, 0.15), 0.4, 0.0, 0.0, 0.14)
POSE_B = Pose.from_ypr((-0.15, 0.25, 0.12), -0.3, 0.0, 0.0, 0.12)


def test_two_coincident_identical_objects_share_each_pixel_equally():
    out = render(scene([obj(0, POSE_A, 1), obj(0, POSE_A, 2)]))
    assert out.alpha.max() > 0.99
    assert np.allclose(out.weights[0], out.weights[1], atol=1e-6)
    assert np.allclose(out.weights[0], out.alpha / 2, atol=1e-6)


def test_an_object_alone_equals_it_beside_an_empty_object():
    alone = render(scene([obj(1, POSE_A, 1)]))
    pair = render(scene([obj(1, POSE_A, 1), obj(2, POSE_A, 2, shape=MODEL.empty_code())]))
    for name in ("rgb", "depth", "alpha", "normals"):
        assert np.array_equal(getattr(alone, name), getattr(pair, name)), name
    assert np.array_equal(alone.weights[0], pair.weights[0])
    assert not pair.weights[1].any() and not pair.amodal[1].any()
    assert pair.instance_ids.max() == 1


def test_weights_sum_to_alpha_and_labels_follow_the_winner():
    out = render(scene([obj(0, POSE_A, 3), obj(1, POSE_B, 7)]))
    assert np.allclose(out.weights.sum(axis=0), out.alpha, atol=1e-5)
    ids = out.instance_ids
    assert set(np.unique(ids)) == {0, 3, 7}
    covered = out.alpha >= 0.5
    assert np.array_equal(ids > 0, covered)
    assert np.isfinite(out.depth).all()  # floor behind everything


def test_amodal_masks_see_through_occluders():
    between = POSE_A.t + 0.35 * (CAMERA.position - POSE_A.t) + np.array([0.04, 0.0, 0.0])
    near = Pose.from_ypr(tuple(between), 0.0, 0.0, 0.0, 0.05)  # hides part of A
    out = render(scene([obj(0, POSE_A, 1), obj(3, near, 2)]))
    vis = out.visible_mask(0)
    assert out.amodal[0].sum() > vis.sum()  # part of A is hidden
    assert np.all(out.amodal[0][vis])  # what is visible is within the amodal mask
    frac = out.visible_fraction()
    assert 0.0 < frac[0] < 1.0 and frac[1] == pytest.approx(1.0, abs=0.02)
    assert render(scene([obj(0, POSE_A, 1)]), amodal=False).amodal is None


def test_chunking_changes_nothing():
    s = scene([obj(0, POSE_A, 1), obj(2, POSE_B, 2)], light=Light(shadows=True))
    a = render(s)
    b = render(s, chunk_rays=97)
    for name in ("rgb", "depth", "alpha", "weights", "normals"):
        assert np.allclose(getattr(a, name), getattr(b, name), atol=1e-6), name


def test_per_sample_reference_agrees_with_the_grid_renderer():
    # naive: every one of 256 stratified samples per box queried from the model itself
    s = scene([obj(0, POSE_A, 1), obj(4, POSE_B, 2)], backdrop=Backdrop())
    fast = render(s, grid_resolution=65)
    slow = render_per_sample(MODEL, s, samples=256)
    a, b = fast.instance_ids, slow.instance_ids
    assert ((a > 0) & (b > 0)).sum() / ((a > 0) | (b > 0)).sum() >= 0.97
    assert (a == b).mean() >= 0.99
    same = (a == b) & (a > 0)
    assert np.median(np.abs(fast.depth[same] - slow.depth[same])) < 0.14 * 2 / 64  # < one cell
    assert np.array_equal(fast.amodal.sum(axis=(1, 2)) > 0, slow.amodal.sum(axis=(1, 2)) > 0)


def test_empty_scene_and_objects_out_of_view():
    empty = render(scene([], backdrop=Backdrop(floor=False)))
    assert empty.weights.shape == (0, 64, 64) and empty.amodal.shape == (0, 64, 64)
    assert np.isinf(empty.depth).all() and not empty.instance_ids.any()
    behind = Pose.from_ypr(tuple(CAMERA.position - 0.5 * CAMERA.c2w[:3, 2]), 0, 0, 0, 0.1)
    out = render(scene([obj(0, behind, 1)], backdrop=Backdrop(floor=False)))
    assert not out.weights.any()


def test_camera_inside_an_object_cube():
    inside = Pose.from_ypr(tuple(CAMERA.position + 0.02), 0, 0, 0, 0.3)
    out = render(scene([obj(2, inside, 1), obj(0, POSE_A, 2)]))
    assert np.isfinite(out.rgb).all() and np.isfinite(out.alpha).all()


def test_auto_resolution_follows_screen_size():
    opts = RenderOptions(cells_per_pixel=1.0)  # the rung nearest in ratio: cells = resolution - 1
    assert auto_resolution(opts, 10.0) == 17  # min_resolution
    assert auto_resolution(opts, 20.0) == 25  # 24 cells: ratio 1.2, against 32: 1.6
    assert auto_resolution(opts, 38.0) == 33  # 32 cells: ratio 1.19, against 48: 1.26
    assert auto_resolution(opts, 40.0) == 49
    assert auto_resolution(opts, 60.0) == 65
    assert auto_resolution(opts, 200.0) == 65  # max_resolution
    assert auto_resolution(opts, math.inf) == 65
    assert auto_resolution(RenderOptions(), 16.0) == 33  # two cells a pixel by default
    assert auto_resolution(RenderOptions(max_resolution=33), 200.0) == 33
    assert auto_resolution(RenderOptions(grid_resolution=40), 5.0) == 40
    # a cube 2 s wide at depth z spans 2 s f / z pixels (pinhole)
    z = float((CAMERA.w2c @ np.r_[POSE_A.t, 1.0])[2])
    assert cube_pixels(CAMERA, POSE_A) == pytest.approx(2 * 0.14 * CAMERA.fx / z)


@pytest.mark.parametrize("field, value", [("threads", 0), ("step", 0.0), ("step", 1.5),
                                           ("grid_resolution", 3), ("chunk_rays", 0),
                                           ("memory_cache_mb", -1.0), ("cells_per_pixel", math.nan),
                                           ("max_resolution", 9)])
def test_bad_options_name_the_field(field, value):
    with pytest.raises(UsageError) as err:
        RenderOptions(**{field: value})
    assert err.value.where == f"RenderOptions.{field}"


def test_public_entry_point():
    out = genfield.render_scene(MODEL, scene([obj(0, POSE_A, 1)]), options=genfield.RenderOptions(threads=1))
    assert out.rgb.shape == (64, 64, 3) and out.rgb.dtype == np.float32
    assert out.srgb8.dtype == np.uint8 and out.instance_ids.max() == 1


@pytest.mark.parametrize("pose", [POSE_A, POSE_B, Pose.from_ypr((0.1, -0.1, 0.3), 1.0, 0.7, -0.4, 0.1)])
def test_screen_rectangle_holds_every_pixel_whose_ray_meets_the_cube(pose):
    from genfield.render.camera import pixel_rays
    from genfield.render.grids import prepare
    from genfield.render.march import Placed, box_interval
    from genfield.render.renderer import screen_rays

    rays = pixel_rays(CAMERA)
    placed = Placed.make(prepare(MODEL.bake(MODEL.shape_code(0), MODEL.appearance_code(0), 17)), pose)
    t0, t1 = box_interval(placed, np.ascontiguousarray(rays.origins.T), np.ascontiguousarray(rays.directions.T))
    hits = np.flatnonzero(t1 > t0)
    chosen = screen_rays(CAMERA, pose)
    assert len(hits) and np.isin(hits, chosen).all()
    assert len(chosen) < 64 * 64  # and it does cull


def test_a_zero_light_direction_is_bad_input():
    with pytest.raises(UsageError) as err:
        render(scene([obj(0, POSE_A, 1)], light=Light(direction=(0.0, 0.0, 0.0))))
    assert err.value.where == "Scene.light.direction"
