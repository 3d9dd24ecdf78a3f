"""The conventions every module relies on, checked against outside references."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from genfield.colour import linear_to_srgb, parse_hex, srgb_to_linear, to_srgb8
from genfield.render.camera import look_at, make_camera, orbit_position, pixel_rays, project
from genfield.scene import Backdrop, CodeChoice, Light, Pose, Scene, SceneObject, rotation_from_ypr
from genfield.seeds import rng


def test_srgb_transfer_matches_iec_61966_2_1_values():
    # IEC 61966-2-1: the encoding's break point 0.0031308 (linear) maps to 0.04045 (encoded).
    assert linear_to_srgb(np.array(0.0031308)) == pytest.approx(0.04045, abs=1e-5)
    # 18% grey encodes to 0.461356 (from the published formula, 1.055 * 0.18^(1/2.4) - 0.055).
    assert linear_to_srgb(np.array(0.18)) == pytest.approx(0.461356, abs=1e-6)
    assert srgb_to_linear(np.array(0.461356)) == pytest.approx(0.18, abs=1e-6)


def test_srgb_8bit_round_trip_is_exact():
    codes = np.arange(256) / 255.0
    assert np.array_equal(to_srgb8(srgb_to_linear(codes)), np.arange(256, dtype=np.uint8))


def test_parse_hex():
    assert parse_hex("#ff8000") == (1.0, 128 / 255, 0.0)
    with pytest.raises(ValueError):
        parse_hex("#ff80")


def test_rotation_matches_scipy_intrinsic_zyx():
    # scipy's "ZYX" (capital letters: intrinsic) is yaw about z, then pitch, then roll.
    for yaw, pitch, roll in [(0.3, -0.2, 1.1), (2.0, 0.5, -0.7), (-1.0, 1.4, 0.0)]:
        ref = Rotation.from_euler("ZYX", [yaw, pitch, roll]).as_matrix()
        assert np.allclose(rotation_from_ypr(yaw, pitch, roll), ref, atol=1e-12)


def test_pose_inverse():
    pose = Pose.from_ypr((0.1, -0.2, 0.3), 0.4, 0.5, 0.6, scale=0.07)
    assert np.allclose(pose.world_to_object() @ pose.object_to_world(), np.eye(4), atol=1e-12)


def test_look_at_axes_follow_opencv():
    # Camera on the -x axis looking at the origin with z up: world +z is image up (camera -y),
    # world +y is image left (camera -x, since camera x points right).
    w2c = look_at((-2.0, 0.0, 0.0), (0.0, 0.0, 0.0))
    assert np.allclose(w2c[:3, :3] @ [1, 0, 0], [0, 0, 1])  # forward
    assert np.allclose(w2c[:3, :3] @ [0, 0, 1], [0, -1, 0])  # up is -y (y points down)
    assert np.allclose(w2c[:3, :3] @ [0, 1, 0], [-1, 0, 0])  # world +y is to the left
    assert np.isclose(np.linalg.det(w2c[:3, :3]), 1.0)


def test_projection_of_ray_points_lands_on_their_pixel_centres():
    cam = make_camera(32, 24, look_at(orbit_position((0, 0, 0.1), 1.5, 0.4, 1.0), (0, 0, 0.1)),
                      fov_deg=50.0)
    rays = pixel_rays(cam)
    t = np.linspace(0.5, 3.0, rays.origins.shape[0])
    pts = rays.origins + t[:, None] * rays.directions
    uvz = project(cam, pts)
    rows, cols = np.divmod(np.arange(32 * 24), 32)
    assert np.allclose(uvz[:, 0], cols + 0.5, atol=1e-9)
    assert np.allclose(uvz[:, 1], rows + 0.5, atol=1e-9)
    assert np.allclose(uvz[:, 2], t * rays.z_per_t, atol=1e-9)  # z-depth from ray length


def test_focal_from_fov_pinhole_relation():
    cam = make_camera(100, 100, np.eye(4), fov_deg=90.0)
    assert cam.fx == pytest.approx(50.0)  # tan(45 deg) = 1: f = W / 2


def test_seeded_streams_are_stable_and_independent():
    a = rng(7, 3, "objects").random(4)
    assert np.array_equal(a, rng(7, 3, "objects").random(4))
    assert not np.array_equal(a, rng(7, 4, "objects").random(4))
    assert not np.array_equal(a, rng(7, 3, "camera").random(4))
    with pytest.raises(ValueError):
        rng(-1, 0, "x")


def test_scene_json_round_trip_is_lossless():
    cam = make_camera(64, 48, look_at((1.0, -1.3, 0.8), (0, 0, 0.05)), fov_deg=40.0)
    obj = SceneObject(
        id=1, label="cup",
        shape=CodeChoice((0.1, -math.pi, 1e-17), {"kind": "named", "name": "cup-0001"}),
        appearance=CodeChoice((0.3, 0.2, 0.1), {"kind": "prior", "temperature": 0.8}),
        pose=Pose.from_ypr((0.0, 0.1, 0.05), 0.3, 0.0, 0.0, 0.05),
    )
    scene = Scene(index=5, seed=11, camera=cam, objects=(obj,), light=Light(shadows=True),
                  backdrop=Backdrop(floor=True), values={"tilt": 0.25})
    text = scene.to_json()
    back = Scene.from_json(text)
    assert back == scene
    assert json.loads(back.to_json()) == json.loads(text)
