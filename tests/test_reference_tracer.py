"""The reference tracer against closed-form ray intersections and against trimesh ray casting."""

from __future__ import annotations

import math

import numpy as np
import pytest
import trimesh

from genfield.assets import load_mesh_assets
from genfield.assets.asset import AnalyticGeometry, Asset
from genfield.assets.paint import Paint
from genfield.assets.sdf import Sphere, Torus
from genfield.colour import srgb_to_linear
from genfield.render.camera import look_at, make_camera, orbit_position, pixel_rays
from genfield.render.reference import trace_reference
from genfield.scene import Backdrop, Light, Pose

RED = Paint(base=(0.8, 0.1, 0.1), second=(0.8, 0.1, 0.1), pattern="split", axis=(0, 0, 1),
            frequency=1, phase=0, duty=0, offset=0, radius=0.1, salt=0)


def _analytic(node, name="probe") -> Asset:
    return Asset(name=name, family="test", source="test", metric_half_extent=1.0,
                 offset=(0.0, 0.0, 0.0), content_hash="0" * 64, parameters={},
                 geometry=AnalyticGeometry(node, RED))


def _camera(size=64, distance=3.0, elevation=0.4, azimuth=0.8, target=(0.0, 0.0, 0.0)):
    pos = orbit_position(target, distance, elevation, azimuth)
    return make_camera(size, size, look_at(pos, target), fov_deg=45.0)


def test_sphere_depth_matches_analytic_ray_sphere_intersection():
    # |o + t d - c|^2 = (s r)^2 -> t = -b - sqrt(b^2 - c), b = d.(o - c), c = |o - c|^2 - (s r)^2
    # (the quadratic of any graphics text, e.g. Shirley's "Ray tracing in one weekend" 6.2).
    centre, scale, radius = np.array([0.1, -0.2, 0.3]), 0.5, 0.8
    cam = _camera(64, target=tuple(centre))
    img = trace_reference(cam, [(_analytic(Sphere(radius)), Pose.from_ypr(centre, 0.4, 0.2, 0.1, scale))])
    rays = pixel_rays(cam)
    oc = rays.origins - centre
    b = np.einsum("ij,ij->i", rays.directions, oc)
    disc = b * b - (np.einsum("ij,ij->i", oc, oc) - (scale * radius) ** 2)
    t = np.where(disc > 0, -b - np.sqrt(np.maximum(disc, 0)), np.inf)
    depth = (t * rays.z_per_t).reshape(64, 64)
    hit = np.isfinite(depth)
    # pixels whose ray passes within a hair of the silhouette may go either way
    margin = (disc.reshape(64, 64) > 1e-3) | (disc.reshape(64, 64) < -1e-3)
    assert np.array_equal(np.isfinite(img.depth)[margin], hit[margin])
    assert np.abs(img.depth[hit & margin] - depth[hit & margin]).max() < 1e-4
    assert (img.instance == hit.astype(np.int32))[margin].all()
    p = rays.origins + t[:, None] * rays.directions
    n_true = ((p - centre) / (scale * radius)).reshape(64, 64, 3)
    assert np.abs(img.normals[hit & margin] - n_true[hit & margin]).max() < 1e-3
    # unlit albedo is the paint in linear light
    assert np.allclose(img.rgb_linear[hit], srgb_to_linear(np.array([0.8, 0.1, 0.1])), atol=1e-6)


def test_lambert_shading_and_backdrop():
    light = Light(direction=(0.0, 0.0, 1.0), strength=0.7, ambient=0.2)
    backdrop = Backdrop(top_srgb=(1.0, 1.0, 1.0), bottom_srgb=(0.0, 0.0, 0.0))
    cam = _camera(48)
    img = trace_reference(cam, [(_analytic(Sphere(0.7)), Pose.from_ypr((0, 0, 0), 0, 0, 0, 1.0))],
                          light=light, backdrop=backdrop)
    hit = img.instance > 0
    expect = img.rgb_linear * (0.2 + 0.7 * np.maximum(img.normals[..., 2:3], 0.0))
    assert np.allclose(img.lit[hit], expect[hit], atol=1e-6)
    # backdrop: sRGB lerp at the pixel centre's height, then linearised
    row = 47
    tval = (row + 0.5) / 48
    assert not hit[row, 0]
    assert np.allclose(img.lit[row, 0], srgb_to_linear(np.full(3, 1 - tval)), atol=1e-6)
    assert np.isinf(img.depth[~hit]).all() and (img.normals[~hit] == 0).all()


def test_floor_depth_and_shadow():
    cam = make_camera(64, 64, look_at((0.0, -2.0, 2.0), (0.0, 0.0, 0.0)), fov_deg=50.0)
    ball = (_analytic(Sphere(0.9)), Pose.from_ypr((0.0, 0.0, 0.6), 0, 0, 0, 0.5))
    light = Light(direction=(0.0, 0.0, 1.0), shadows=True, ambient=0.3, strength=1.0)
    img = trace_reference(cam, [ball], light=light, backdrop=Backdrop(floor=True))
    rays = pixel_rays(cam)
    t_floor = -rays.origins[:, 2] / rays.directions[:, 2]  # plane z = 0
    floor = (img.instance == 0).ravel()
    assert np.allclose(img.depth.ravel()[floor], (t_floor * rays.z_per_t)[floor], rtol=1e-6)
    # floor points straight under the ball (within its radius 0.45) are in its shadow
    p = rays.origins + t_floor[:, None] * rays.directions
    under = floor & (np.linalg.norm(p[:, :2], axis=1) < 0.4)
    open_floor = floor & (np.linalg.norm(p[:, :2], axis=1) > 0.5)
    assert under.any() and open_floor.any()
    albedo = srgb_to_linear(np.array(Backdrop().floor_srgb))
    lit = img.lit.reshape(-1, 3)
    assert np.allclose(lit[under], albedo * 0.3, atol=1e-6)
    assert np.allclose(lit[open_floor], albedo * 1.3, atol=1e-6)


def test_nearer_object_wins_and_instances_are_one_based():
    cam = make_camera(33, 33, look_at((0.0, -3.0, 0.0), (0.0, 0.0, 0.0)), fov_deg=40.0)  # odd: a centre pixel
    far = (_analytic(Sphere(0.9), "far"), Pose.from_ypr((0.0, 1.0, 0.0), 0, 0, 0, 1.0))
    near = (_analytic(Sphere(0.9), "near"), Pose.from_ypr((0.0, -1.0, 0.0), 0, 0, 0, 0.3))
    img = trace_reference(cam, [far, near])
    assert img.instance[16, 16] == 2 and (img.instance == 1).any()
    assert img.depth[16, 16] == pytest.approx(2.0 - 0.27, abs=1e-4)  # 3 - 1 - 0.9 * 0.3


def test_trimesh_ray_casting_agrees_with_sphere_tracing(tmp_path):
    # The same torus twice: exactly (sphere traced) and as a fine mesh exported and loaded
    # through the importer (cast by trimesh/Embree). A 128-segment mesh is within
    # R (1 - cos(pi / 128)) ~ 2e-4 of the torus.
    big, small = 0.6, 0.3
    mesh = trimesh.creation.torus(major_radius=big, minor_radius=small, major_sections=128,
                                  minor_sections=64)
    mesh.export(tmp_path / "torus.ply")
    imported = load_mesh_assets(tmp_path / "torus.ply")[0]
    # the importer rescales to FIT: undo it by scaling the pose (its metric size is known)
    s_mesh = imported.metric_half_extent
    cam = _camera(96, distance=2.6, elevation=0.7, azimuth=0.3)
    exact = trace_reference(cam, [(_analytic(Torus(big, small)), Pose.from_ypr((0, 0, 0), 0, 0, 0, 1.0))])
    cast = trace_reference(cam, [(imported, Pose.from_ypr(imported.offset, 0, 0, 0, s_mesh))])
    a, b = exact.instance > 0, cast.instance > 0
    iou = (a & b).sum() / (a | b).sum()
    assert iou > 0.99
    both = a & b
    assert np.median(np.abs(exact.depth[both] - cast.depth[both])) < 1e-3
    assert np.mean(np.abs(exact.depth[both] - cast.depth[both]) < 5e-3) > 0.98
    cos = np.sum(exact.normals[both] * cast.normals[both], axis=-1)
    assert np.median(cos) > math.cos(math.radians(3.0))


def test_pose_rotation_is_applied_as_documented():
    # An off-centre sphere in the object frame, yawed by 90 degrees: x_world = t + s R x_obj.
    asset = _analytic(Sphere(0.2, centre=(0.6, 0.0, 0.0)))
    pose = Pose.from_ypr((0.0, 0.0, 0.0), math.pi / 2, 0, 0, 1.0)
    cam = make_camera(65, 65, look_at((0.0, 0.0, 4.0), (0.0, 0.0, 0.0), up=(0.0, 1.0, 0.0)),
                      fov_deg=40.0)
    img = trace_reference(cam, [(asset, pose)])
    rows, cols = np.nonzero(img.instance)
    # world centre (0, 0.6, 0); the camera looks down -z with image up = +y: above the middle
    assert rows.mean() < 32 - 5 and abs(cols.mean() - 32) < 1.0
