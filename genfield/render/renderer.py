"""``render_scene``: a concrete scene and a model into an image and exact per-pixel labels.

Pipeline (DEVELOPERS.md, "The renderer"): pick a grid size per object from its size on
screen; fetch its prepared grid from the cache (memory, disk, else ``model.bake``); cast one
ray per pixel; cut rays at the floor; march the rays that meet an object's cube, in chunks,
at shared steps (``march``); merge and volume-render (``composite``); shade the visible
samples (``shade``); trace shadow rays through the same grids; put the objects over the
floor and the backdrop.
"""

from __future__ import annotations

import functools
import logging
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from genfield.colour import srgb_to_linear
from genfield.compute import heavy_work
from genfield.render.cache import GridCache, default_cache
from genfield.render.camera import pixel_rays
from genfield.render.composite import composite
from genfield.render.march import Placed, box_interval, march_all, transmittance
from genfield.render.options import RenderOptions, auto_resolution
from genfield.render.output import MASK_ALPHA, RenderOutput
from genfield.render.shade import backdrop_image, floor_distance, light_direction, surface_terms
from genfield.scene import Camera, Pose, Scene

log = logging.getLogger(__name__)

# Shadow rays start this many ray steps off the surface along its normal, clear of the
# surface's own density ramp (a "shadow bias", common practice against self-shadowing).
SHADOW_BIAS_STEPS = 2.0
FLOOR_BIAS = 1e-4  # metres above the floor where its shadow rays start


def cube_pixels(camera: Camera, pose: Pose) -> float:
    """Pixels spanned on screen by the object's cube (2 s wide) at its centre's depth.

    inf when the camera is within the cube's bounding sphere (the nearest point is closer).
    """
    z = float((camera.w2c @ np.r_[pose.t, 1.0])[2])
    if z <= math.sqrt(3.0) * pose.scale:
        return math.inf
    return 2.0 * pose.scale * max(camera.fx, camera.fy) / z


def screen_rays(camera: Camera, pose: Pose) -> np.ndarray:
    """Flat indices of the pixels whose rays can meet the object's cube, sorted.

    The image of a convex solid lies within the bounding rectangle of its projected corners
    when all corners are in front of the camera (perspective maps segments to segments); a
    cube that reaches the camera's plane gets every pixel.
    """
    corners = np.array([[x, y, z] for x in (-1, 1) for y in (-1, 1) for z in (-1, 1)], float)
    world = pose.t + pose.scale * corners @ pose.R.T  # (8, 3)
    cam = world @ camera.w2c[:3, :3].T + camera.w2c[:3, 3]
    w, h = camera.width, camera.height
    if np.any(cam[:, 2] <= 1e-9):
        return np.arange(w * h)
    u = camera.fx * cam[:, 0] / cam[:, 2] + camera.cx
    v = camera.fy * cam[:, 1] / cam[:, 2] + camera.cy
    # pixel centres at col + 0.5 within [min u, max u], one pixel of margin for rounding
    c0, c1 = max(int(np.floor(u.min() - 0.5)) - 1, 0), min(int(np.ceil(u.max() - 0.5)) + 1, w - 1)
    r0, r1 = max(int(np.floor(v.min() - 0.5)) - 1, 0), min(int(np.ceil(v.max() - 0.5)) + 1, h - 1)
    if c1 < c0 or r1 < r0:
        return np.zeros(0, np.int64)
    return (np.arange(r0, r1 + 1)[:, None] * w + np.arange(c0, c1 + 1)[None, :]).ravel()


@functools.lru_cache(maxsize=8)
def _camera_rays(camera: Camera) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Pixel rays of a camera as read-only (3, N) origins, (3, N) directions, (N,) z_per_t."""
    rays = pixel_rays(camera)
    out = (np.ascontiguousarray(rays.origins.T), np.ascontiguousarray(rays.directions.T), rays.z_per_t)
    for a in out:
        a.setflags(write=False)
    return out


def _chunks(ids: np.ndarray, size: int):
    for start in range(0, len(ids), size):
        yield ids[start : start + size]


@dataclass
class _Primary:
    """Per-pixel results of marching the camera rays (N = H * W, K objects)."""

    alpha: np.ndarray  # (N,)
    t_surface: np.ndarray  # (N,) ray distance of the first object surface, inf: none
    delta: np.ndarray  # (N,) ray step, inf where no object was met
    shares: np.ndarray  # (K, N)
    alone: np.ndarray  # (K, N)
    albedo_sum: np.ndarray  # (N, 3) sum w a
    direct_sum: np.ndarray  # (N, 3) sum w a max(0, n.l)
    normal_sum: np.ndarray  # (N, 3) sum w n


def _primary(scene: Scene, placed: list[Placed], o3: np.ndarray, d3: np.ndarray, t_floor: np.ndarray,
             light: np.ndarray, options: RenderOptions) -> _Primary:
    """March, composite and shade the camera rays that meet an object's cube, in chunks."""
    n, k_objects = o3.shape[1], len(placed)
    out = _Primary(np.zeros(n), np.full(n, np.inf), np.full(n, np.inf), np.zeros((k_objects, n)),
                   np.zeros((k_objects, n)), np.zeros((n, 3)), np.zeros((n, 3)), np.zeros((n, 3)))
    marching = [i for i, p in enumerate(placed) if not p.grid.is_empty]
    active = [placed[i] for i in marching]
    intervals = []
    met = np.zeros(n, bool)
    for i, p in zip(marching, active, strict=True):
        ids = screen_rays(scene.camera, scene.objects[i].pose)
        t0, t1 = np.full(n, np.inf), np.full(n, -np.inf)
        t0[ids], t1[ids] = box_interval(p, o3.take(ids, axis=1), d3.take(ids, axis=1))
        intervals.append((t0, t1))
        met |= (t1 > t0) & (t0 < t_floor)
    for ids in _chunks(np.flatnonzero(met), options.chunk_rays):
        sub = [(t0.take(ids), t1.take(ids)) for t0, t1 in intervals]
        samples, dl = march_all(active, o3.take(ids, axis=1), d3.take(ids, axis=1), t_floor.take(ids),
                                options.step, sub)
        merged = composite(samples, dl, len(ids))
        a_sum, d_sum, n_sum = surface_terms(merged, samples, active, light, len(ids))
        out.alpha[ids], out.t_surface[ids], out.delta[ids] = merged.alpha, merged.t_surface, dl
        out.shares[marching, ids[:, None]] = merged.shares.T
        out.alone[marching, ids[:, None]] = merged.alone.T
        out.albedo_sum[ids], out.direct_sum[ids], out.normal_sum[ids] = a_sum, d_sum, n_sum
    return out


def render_scene(model: Any, scene: Scene, *, options: RenderOptions = RenderOptions(),
                 cache: GridCache | None = None) -> RenderOutput:
    """Render ``scene`` with the fields of ``model`` (anything with ``bake``; see DEVELOPERS.md).

    ``cache`` defaults to the process-wide one, bounded by ``options``.
    """
    with heavy_work(options.threads):
        return _render(model, scene, options, cache)


def _render(model: Any, scene: Scene, options: RenderOptions, cache: GridCache | None) -> RenderOutput:
    cam, lit, backdrop = scene.camera, scene.light, scene.backdrop
    h, w = cam.height, cam.width
    n, k_objects = h * w, len(scene.objects)
    if cache is None:
        cache = default_cache(options.memory_cache_mb, options.disk_cache, options.disk_cache_mb)
    grids = cache.get_many(model, [(obj.shape.array, obj.appearance.array,
                                    auto_resolution(options, cube_pixels(cam, obj.pose)))
                                   for obj in scene.objects])
    placed = [Placed.make(g, obj.pose) for g, obj in zip(grids, scene.objects, strict=True)]

    o3, d3, z_per_t = _camera_rays(cam)  # (3, N), (3, N), (N,)
    origins, directions = o3.T, d3.T  # (N, 3) views
    light = light_direction(lit)
    t_floor = floor_distance(origins, directions) if backdrop.floor else np.full(n, np.inf)
    floor_normal = np.where(origins[:, 2:3] >= 0.0, 1.0, -1.0) * np.array([0.0, 0.0, 1.0])  # (N, 3)
    p = _primary(scene, placed, o3, d3, t_floor, light, options)
    log.debug("scene %d: %d objects, %d of %d rays met a cube, cache %s", scene.index, k_objects,
              int(np.isfinite(p.delta).sum()), n, cache.stats)

    on_object = np.isfinite(p.t_surface)
    on_floor = ~on_object & np.isfinite(t_floor)
    length = np.linalg.norm(p.normal_sum, axis=1, keepdims=True)
    normals = np.where(length > 0.0, p.normal_sum / np.maximum(length, 1e-30), 0.0)

    # light reaching the first surfaces: 1, or the transmittance of the shadow ray
    vis_object, vis_floor = np.ones(n), np.ones(n)
    occluders = [q for q in placed if not q.grid.is_empty]
    if lit.shadows and occluders:
        i = np.flatnonzero(on_object & (p.direct_sum.sum(axis=1) > 0.0))  # lit side only
        start = origins[i] + p.t_surface[i, None] * directions[i] + SHADOW_BIAS_STEPS * p.delta[i, None] * normals[i]
        vis_object[i] = _shadow(occluders, start, light, options)
        i = np.flatnonzero(np.isfinite(t_floor) & (p.alpha < 1.0) & (floor_normal @ light > 0.0))
        start = origins[i] + t_floor[i, None] * directions[i] + FLOOR_BIAS * floor_normal[i]
        vis_floor[i] = _shadow(occluders, start, light, options)

    rgb_objects = lit.ambient * p.albedo_sum + (lit.strength * vis_object)[:, None] * p.direct_sum
    behind = backdrop_image(backdrop, h, w).reshape(n, 3)
    if backdrop.floor:
        floor_albedo = srgb_to_linear(np.asarray(backdrop.floor_srgb))
        cosine = np.maximum(floor_normal @ light, 0.0)
        floor_rgb = floor_albedo[None, :] * (lit.ambient + lit.strength * cosine * vis_floor)[:, None]
        behind = np.where(np.isfinite(t_floor)[:, None], floor_rgb, behind)
    rgb = rgb_objects + (1.0 - p.alpha)[:, None] * behind  # objects over what lies behind them

    depth = np.where(on_object, p.t_surface, np.where(on_floor, t_floor, np.inf)) * z_per_t
    normals = np.where(on_object[:, None], normals, np.where(on_floor[:, None], floor_normal, 0.0))
    amodal = (p.alone >= MASK_ALPHA).reshape(k_objects, h, w) if options.amodal else None
    return RenderOutput(
        rgb=rgb.reshape(h, w, 3).astype(np.float32),
        depth=depth.reshape(h, w).astype(np.float32),
        alpha=p.alpha.reshape(h, w).astype(np.float32),
        weights=p.shares.reshape(k_objects, h, w).astype(np.float32),
        amodal=amodal,
        normals=normals.reshape(h, w, 3).astype(np.float32),
        object_ids=tuple(obj.id for obj in scene.objects),
    )


def _shadow(placed: list[Placed], points: np.ndarray, light: np.ndarray,
            options: RenderOptions) -> np.ndarray:
    """(M,) transmittance from ``points`` towards the light through all objects, chunked."""
    out = np.ones(len(points))
    for ids in _chunks(np.arange(len(points)), options.chunk_rays):
        o3 = np.ascontiguousarray(points[ids].T)  # (3, m)
        d3 = np.ascontiguousarray(np.broadcast_to(light[:, None], o3.shape))
        out[ids] = transmittance(placed, o3, d3, options.step)
    return out
