"""Where things render: floor, projection, analytic surfaces and the reference tracer."""

from __future__ import annotations

import math

import numpy as np
import pytest
import torch

from genfield.colour import srgb_to_linear
from genfield.render.analytic import AnalyticModel, AnalyticShape, box, constant_colour, sphere
from genfield.render.cache import GridCache
from genfield.render.camera import look_at, make_camera, orbit_position, pixel_rays
from genfield.render.options import RenderOptions
from genfield.render.renderer import render_scene
from genfield.scene import Backdrop, CodeChoice, Light, Pose, Scene, SceneObject

torch.set_num_threads(1)


def obj(model, i: int, pose: Pose, oid: int | None = None) -> SceneObject:
    return SceneObject(oid or i + 1, model.shapes[i].name, CodeChoice(tuple(model.shape_code(i))),
                       CodeChoice(tuple(model.appearance_code(i))), pose)


def render(model, camera, objects, *, light=Light(), backdrop=Backdrop(), **opts):
    scene = Scene(0, 0, camera, tuple(objects), light, backdrop)
    return render_scene(model, scene, options=RenderOptions(threads=1, **opts),
                        cache=GridCache(1 << 28, disk=False))


BALL = AnalyticModel([AnalyticShape("ball", sphere(0.8), constant_colour((0.7, 0.3, 0.2)))])


def test_floor_depth_is_the_analytic_ray_plane_distance():
    # Independent of pixel_rays: X = C + lam R^T K^-1 (u, v, 1), X_z = 0, and the camera z-depth
    # of that point is lam itself (K^-1 (u, v, 1) has z = 1) (Hartley and Zisserman, eq. 6.1).
    cam = make_camera(40, 30, look_at((0.3, -1.2, 0.6), (0.0, 1.0, 0.1)), fov_deg=70.0)
    out = render(BALL, cam, [], backdrop=Backdrop(floor=True))
    u, v = np.meshgrid(np.arange(40) + 0.5, np.arange(30) + 0.5, indexing="xy")
    rays_cam = np.linalg.inv(cam.K) @ np.stack([u.ravel(), v.ravel(), np.ones(u.size)])
    rays_world = cam.w2c[:3, :3].T @ rays_cam  # (3, N)
    c = cam.position
    with np.errstate(divide="ignore"):
        lam = -c[2] / rays_world[2]
    expected = np.where(lam > 0, lam, np.inf).reshape(30, 40)
    assert np.isinf(expected).any() and np.isfinite(expected).any()  # horizon in view
    assert np.array_equal(np.isfinite(out.depth), np.isfinite(expected))
    finite = np.isfinite(expected)
    assert np.allclose(out.depth[finite], expected[finite], rtol=1e-6)
    assert np.allclose(out.normals[finite], [0.0, 0.0, 1.0])
    assert np.all(out.alpha == 0.0)


def test_known_points_project_onto_their_objects():
    # u = fx X/Z + cx, v = fy Y/Z + cy with X = w2c (x, 1) (pinhole, Hartley and Zisserman 6.1),
    # computed here by hand; each sphere's centre must land on a pixel of that sphere.
    cam = make_camera(64, 48, look_at((1.1, -1.4, 0.9), (0.0, 0.0, 0.1)), fov_deg=55.0)
    centres = [(0.25, 0.1, 0.1), (-0.3, 0.2, 0.2), (0.0, -0.35, 0.05), (-0.1, 0.45, 0.3)]
    objects = [obj(BALL, 0, Pose.from_ypr(c, 0.0, 0.0, 0.0, 0.06), oid=10 + k)
               for k, c in enumerate(centres)]
    out = render(BALL, cam, objects)
    ids = out.instance_ids
    w2c = cam.w2c
    for k, c in enumerate(centres):
        x = w2c[:3, :3] @ np.asarray(c) + w2c[:3, 3]
        u = cam.fx * x[0] / x[2] + cam.cx
        v = cam.fy * x[1] / x[2] + cam.cy
        assert ids[int(v), int(u)] == 10 + k
        # the front of the sphere is nearer than its centre by about the radius (0.048 m)
        assert x[2] - 0.06 < out.depth[int(v), int(u)] < x[2]


def analytic_sphere_hits(cam, centre, radius):
    """Ray-sphere intersection |o + t d - c|^2 = r^2, smaller root (the quadratic formula)."""
    rays = pixel_rays(cam)
    oc = rays.origins - np.asarray(centre)
    b = np.sum(oc * rays.directions, axis=1)
    disc = b * b - (np.sum(oc * oc, axis=1) - radius**2)
    hit = disc > 0
    t = np.where(hit, -b - np.sqrt(np.maximum(disc, 0.0)), np.inf)
    points = rays.origins + np.where(hit, t, 0.0)[:, None] * rays.directions
    normals = (points - centre) / radius
    shape = (cam.height, cam.width)
    return hit.reshape(shape), (t * rays.z_per_t).reshape(shape), normals.reshape(*shape, 3)


def test_sphere_field_matches_analytic_ray_sphere_intersection():
    cam = make_camera(80, 80, look_at((1.2, -0.9, 0.7), (0.0, 0.0, 0.0)), fov_deg=40.0)
    scale, centre = 0.3, np.zeros(3)
    out = render(BALL, cam, [obj(BALL, 0, Pose.from_ypr(tuple(centre), 0.3, 0.2, 0.1, scale))],
                 grid_resolution=65)
    hit, depth, normals = analytic_sphere_hits(cam, centre, 0.8 * scale)
    mask = out.alpha >= 0.5
    iou = (mask & hit).sum() / (mask | hit).sum()
    assert iou >= 0.98
    both = mask & hit
    cell = scale * 2.0 / 64
    assert abs(np.median(out.depth[both] - depth[both])) < cell  # median depth error < one cell
    cosine = np.sum(out.normals[both] * normals[both], axis=1)
    assert np.median(np.degrees(np.arccos(np.clip(cosine, -1, 1)))) < 5.0


def test_builtin_assets_match_the_reference_tracer():
    from genfield.assets import make_builtin
    from genfield.render.reference import trace_reference

    assets = [make_builtin("hex_nut", 0), make_builtin("bottle", 1), make_builtin("l_bracket", 2)]
    model = AnalyticModel.from_assets(assets)
    cam = make_camera(96, 96, look_at(orbit_position((0, 0, 0.1), 1.0, 0.6, -0.9), (0, 0, 0.1)),
                      fov_deg=45.0)
    poses = [Pose.from_ypr((0.2 * math.cos(a), 0.2 * math.sin(a), 0.12), a, 0.0, 0.0, 0.12)
             for a in (0.3, 2.4, 4.4)]
    out = render(model, cam, [obj(model, i, p) for i, p in enumerate(poses)], grid_resolution=65)
    ref = trace_reference(cam, list(zip(assets, poses, strict=True)))
    mask, ref_mask = out.alpha >= 0.5, ref.instance > 0
    assert (mask & ref_mask).sum() / (mask | ref_mask).sum() >= 0.98
    same = (out.instance_ids == ref.instance) & ref_mask
    assert same.sum() >= 0.97 * ref_mask.sum()  # and the right object at each pixel
    cell = 0.12 * 2.0 / 64
    assert np.median(np.abs(out.depth[same] - ref.depth[same])) < cell


def test_backdrop_decodes_srgb_by_iec_61966_2_1():
    # IEC 61966-2-1: encoded 0.04045 is linear 0.0031308; encoded 0.461356 is linear 0.18.
    cam = make_camera(8, 4, look_at((0, -2, 1), (0, 0, 1)), fov_deg=30.0)
    out = render(BALL, cam, [], backdrop=Backdrop(top_srgb=(0.04045,) * 3, bottom_srgb=(0.461356,) * 3))
    f = (np.arange(4) + 0.5) / 4  # row centres
    srgb = (1 - f) * 0.04045 + f * 0.461356
    assert np.allclose(out.rgb[:, 0, 0], srgb_to_linear(srgb), atol=1e-6)
    flat = render(BALL, cam, [], backdrop=Backdrop(top_srgb=(0.461356,) * 3, bottom_srgb=(0.461356,) * 3))
    assert np.allclose(flat.rgb, 0.18, atol=1e-6)
    assert np.all(flat.srgb8 == round(0.461356 * 255))


def test_lambert_shading_of_a_flat_face():
    # Lambert: albedo * (ambient + strength * max(0, n . l)) (module doc of genfield.render.shade)
    slab = AnalyticModel([AnalyticShape("slab", box((0.9, 0.9, 0.3)), constant_colour((0.6, 0.5, 0.4)))])
    cam = make_camera(32, 32, look_at((0.0, 0.0, 2.0), (0.0, 0.0, 0.0), up=(0.0, 1.0, 0.0)), fov_deg=30.0)
    light = Light(direction=(0.6, 0.0, 0.8), strength=0.9, ambient=0.2)
    out = render(slab, cam, [obj(slab, 0, Pose.from_ypr((0, 0, 0), 0, 0, 0, 0.5))], light=light)
    albedo = srgb_to_linear(np.array([0.6, 0.5, 0.4]))
    expected = albedo * (0.2 + 0.9 * 0.8)  # n = +z, n . l = 0.8
    assert np.allclose(out.rgb[14:18, 14:18], expected, rtol=0.01)
    assert np.allclose(out.normals[14:18, 14:18], [0.0, 0.0, 1.0], atol=0.02)


def test_shadow_on_the_floor_under_an_object():
    cam = make_camera(48, 48, look_at((0.0, -1.2, 1.2), (0.0, 0.0, 0.0)), fov_deg=50.0)
    light = Light(direction=(0.0, 0.0, 1.0), strength=1.0, ambient=0.2, shadows=True)
    objects = [obj(BALL, 0, Pose.from_ypr((0.0, 0.0, 0.3), 0, 0, 0, 0.15))]
    lit = render(BALL, cam, objects, light=light, backdrop=Backdrop(floor=True))
    flat = render(BALL, cam, objects, light=Light(direction=(0, 0, 1), strength=1.0, ambient=0.2),
                  backdrop=Backdrop(floor=True))
    floor = srgb_to_linear(np.array(Backdrop().floor_srgb))
    # the floor point straight below the ball: in full shadow, ambient light only
    below = np.array([0.0, 0.0, 0.0])
    x = cam.w2c[:3, :3] @ below + cam.w2c[:3, 3]
    u, v = int(cam.fx * x[0] / x[2] + cam.cx), int(cam.fy * x[1] / x[2] + cam.cy)
    if lit.alpha[v, u] < 0.01:  # not hidden behind the ball from this camera
        assert np.allclose(lit.rgb[v, u], floor * 0.2, rtol=0.02)
        assert np.allclose(flat.rgb[v, u], floor * 1.2, rtol=0.02)
    # far from the ball the floor is lit alike with or without shadows
    assert np.allclose(lit.rgb[0, 0], flat.rgb[0, 0]) and np.allclose(lit.rgb[-1, -1], flat.rgb[-1, -1])
    assert (lit.rgb.sum(axis=2) < flat.rgb.sum(axis=2) - 1e-3).sum() > 20  # a shadow was cast


@pytest.mark.parametrize("resolution", [33, 65])
def test_objects_in_front_of_the_floor_occlude_it_and_the_floor_occludes_what_is_below(resolution):
    cam = make_camera(48, 48, look_at((0.0, -1.0, 0.5), (0.0, 0.0, 0.1)), fov_deg=50.0)
    # half sunk into the floor: the floor hides the lower half, the ball hides the floor
    out = render(BALL, cam, [obj(BALL, 0, Pose.from_ypr((0.0, 0.0, 0.0), 0, 0, 0, 0.2))],
                 backdrop=Backdrop(floor=True), grid_resolution=resolution)
    hit, depth, _ = analytic_sphere_hits(cam, np.zeros(3), 0.16)
    rays = pixel_rays(cam)
    with np.errstate(divide="ignore"):
        t_floor = np.where(rays.directions[:, 2] < 0, -rays.origins[:, 2] / rays.directions[:, 2], np.inf)
    floor_depth = (t_floor * rays.z_per_t).reshape(48, 48)
    visible = hit & (depth < floor_depth)
    mask = out.alpha >= 0.5
    assert (mask & visible).sum() / (mask | visible).sum() >= 0.95
    agree = mask == visible  # away from the silhouette: depth of the ball or of the floor
    assert agree.mean() > 0.98
    expected = np.where(visible, depth, floor_depth)
    assert np.array_equal(np.isfinite(out.depth[agree]), np.isfinite(expected[agree]))
    finite = agree & np.isfinite(expected)
    np.testing.assert_allclose(out.depth[finite], expected[finite], atol=2 * 0.2 * 2.0 / (resolution - 1))
