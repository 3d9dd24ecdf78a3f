"""Pinhole cameras in OpenCV axes (x right, y down, z forward) and the rays through pixels.

Pixel (col, row) has its centre at (col + 0.5, row + 0.5); a point X_cam projects to
u = fx X/Z + cx, v = fy Y/Z + cy (Hartley and Zisserman, eq. 6.1 in the usual form).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from genfield.scene import Camera


def focal_from_fov(size_px: int, fov_deg: float) -> float:
    """Focal length in pixels for a field of view (degrees) across ``size_px`` pixels."""
    if not 0.0 < fov_deg < 180.0:
        raise ValueError(f"field of view must be in (0, 180) degrees, got {fov_deg}")
    return 0.5 * size_px / math.tan(math.radians(fov_deg) / 2.0)


def look_at(position, target, up=(0.0, 0.0, 1.0)) -> np.ndarray:
    """World-to-camera 4x4 for a camera at ``position`` looking at ``target``.

    Camera axes in world: forward f = target - position (normalised), right = f x up,
    down = f x right, so that (right, down, forward) is right-handed as OpenCV's (x, y, z).
    """
    p = np.asarray(position, dtype=np.float64)
    f = np.asarray(target, dtype=np.float64) - p
    if np.linalg.norm(f) < 1e-12:
        raise ValueError("camera position and target coincide")
    f /= np.linalg.norm(f)
    right = np.cross(f, np.asarray(up, dtype=np.float64))
    if np.linalg.norm(right) < 1e-9:
        raise ValueError("camera up vector is parallel to the viewing direction")
    right /= np.linalg.norm(right)
    down = np.cross(f, right)
    c2w_rot = np.stack([right, down, f], axis=1)  # columns are the camera axes in world
    w2c = np.eye(4)
    w2c[:3, :3] = c2w_rot.T
    w2c[:3, 3] = -c2w_rot.T @ p
    return w2c


def orbit_position(target, distance: float, elevation: float, azimuth: float) -> np.ndarray:
    """Camera centre on a sphere around ``target``: elevation above the xy-plane, azimuth from +x
    towards +y (both radians)."""
    ce = math.cos(elevation)
    offset = distance * np.array([ce * math.cos(azimuth), ce * math.sin(azimuth), math.sin(elevation)])
    return np.asarray(target, dtype=np.float64) + offset


def make_camera(width: int, height: int, w2c: np.ndarray, *, fov_deg: float | None = None,
                focal_px: float | None = None) -> Camera:
    """A centred pinhole camera; give exactly one of ``fov_deg`` (horizontal) or ``focal_px``."""
    if (fov_deg is None) == (focal_px is None):
        raise ValueError("give exactly one of fov_deg and focal_px")
    f = focal_from_fov(width, fov_deg) if fov_deg is not None else float(focal_px)
    return Camera(
        width=int(width), height=int(height), fx=f, fy=f, cx=width / 2.0, cy=height / 2.0,
        world_to_camera=tuple(tuple(float(v) for v in row) for row in np.asarray(w2c)),
    )


@dataclass(frozen=True)
class Rays:
    """Rays through pixel centres, row-major (row 0 first).

    origins: (N, 3) world; directions: (N, 3) unit, world; z_per_t: (N,) the camera z-depth
    gained per unit of ray length, so that ``depth = t * z_per_t`` for a hit at distance t.
    """

    origins: np.ndarray
    directions: np.ndarray
    z_per_t: np.ndarray


def pixel_rays(camera: Camera) -> Rays:
    """One ray per pixel centre of ``camera``; N = height * width."""
    # indexing="xy": cols varies along axis 1, rows along axis 0, so a reshape to (H, W) is an image
    cols, rows = np.meshgrid(np.arange(camera.width) + 0.5, np.arange(camera.height) + 0.5, indexing="xy")
    d_cam = np.stack(
        [(cols - camera.cx) / camera.fx, (rows - camera.cy) / camera.fy, np.ones_like(cols)], axis=-1
    ).reshape(-1, 3)  # (N, 3), camera z = 1
    norms = np.linalg.norm(d_cam, axis=1)
    c2w = camera.c2w
    directions = (d_cam / norms[:, None]) @ c2w[:3, :3].T
    origins = np.broadcast_to(c2w[:3, 3], directions.shape).copy()
    return Rays(origins=origins, directions=directions, z_per_t=1.0 / norms)


def project(camera: Camera, points_world: np.ndarray) -> np.ndarray:
    """Pixel coordinates (N, 2) and camera depth: returns (N, 3) as (u, v, z)."""
    p = np.asarray(points_world, dtype=np.float64).reshape(-1, 3)
    pc = p @ camera.w2c[:3, :3].T + camera.w2c[:3, 3]
    z = pc[:, 2]
    u = camera.fx * pc[:, 0] / z + camera.cx
    v = camera.fy * pc[:, 1] / z + camera.cy
    return np.stack([u, v, z], axis=1)
