"""The per-sample renderer: ``model.query`` at fixed samples in every box, no grids, no skipping.

This is the baseline the fast renderer is measured against (``genfield bench``) and a naive
reference for the tests: every ray that meets an object's cube gets ``samples`` stratified
midpoints over its chord, each one queried from the model; the objects' samples are merged
by sorting distances along each ray and composited with the same quadrature as
``genfield.render.composite`` (alpha_i = 1 - exp(-sigma_i delta_i), NeRF eq. 3; Max 1995),
with density SIGMA_MAX * occupancy / s as genfield.field.grid defines it.

It returns the unlit composite of albedo (no normals, no shading, no shadows, no floor): the
least any per-sample renderer must do, so a speed-up against it is a conservative one.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from genfield.compute import heavy_work
from genfield.field.grid import SIGMA_MAX
from genfield.render.camera import pixel_rays
from genfield.render.composite import LN2
from genfield.render.output import MASK_ALPHA, RenderOutput
from genfield.render.shade import backdrop_image
from genfield.scene import Scene


def _cube_interval(o: np.ndarray, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Slab-method chord (t0, t1) of rays (N, 3) with [-1, 1]^3 (Kay and Kajiya 1986)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        lo, hi = (-1.0 - o) / d, (1.0 - o) / d
    lo, hi = np.nan_to_num(lo, nan=-np.inf), np.nan_to_num(hi, nan=np.inf)
    t0 = np.maximum(np.minimum(lo, hi).max(axis=1), 0.0)
    return t0, np.maximum(lo, hi).min(axis=1)


CHUNK_RAYS = 2048  # rays rendered together: bounds the samples held at once


def _chunk(model: Any, scene: Scene, origins: np.ndarray, directions: np.ndarray, samples: int):
    """alpha (n,), ray distance of T = 1/2 (n,), sum w a (n, 3), shares (K, n), alone (K, n)."""
    n, k_objects = len(origins), len(scene.objects)
    ray_parts, t_parts, delta_parts, sigma_parts, albedo_parts, owner_parts = [], [], [], [], [], []
    for k, obj in enumerate(scene.objects):
        m = obj.pose.world_to_object()
        o = origins @ m[:3, :3].T + m[:3, 3]  # (n, 3) object frame
        d = directions @ m[:3, :3].T
        t0, t1 = _cube_interval(o, d)
        ids = np.flatnonzero(t1 > t0)
        step = (t1[ids] - t0[ids]) / samples  # (m,) world metres
        u = (np.arange(samples) + 0.5)[None, :]  # stratified midpoints
        t = t0[ids, None] + u * step[:, None]  # (m, S)
        pts = o[ids, None, :] + t[..., None] * d[ids, None, :]  # (m, S, 3)
        occupancy, albedo = model.query(pts.reshape(-1, 3).astype(np.float32),
                                        obj.shape.array, obj.appearance.array)
        ray_parts.append(np.repeat(ids, samples))
        t_parts.append(t.ravel())
        delta_parts.append(np.repeat(step, samples))
        sigma_parts.append(SIGMA_MAX * np.asarray(occupancy, np.float64) / obj.pose.scale)
        albedo_parts.append(np.asarray(albedo, np.float64))
        owner_parts.append(np.full(len(ids) * samples, k))
    alpha, depth_t, rgb_sum = np.zeros(n), np.full(n, np.inf), np.zeros((n, 3))
    shares, alone = np.zeros((k_objects, n)), np.zeros((k_objects, n))
    if not sum(len(r) for r in ray_parts):
        return alpha, depth_t, rgb_sum, shares, alone
    ray, t = np.concatenate(ray_parts), np.concatenate(t_parts)
    delta, sigma = np.concatenate(delta_parts), np.concatenate(sigma_parts)
    albedo, owner = np.concatenate(albedo_parts), np.concatenate(owner_parts)
    order = np.lexsort((t, ray))  # by ray, then distance: the merge of all objects
    ray, t, delta, sigma, albedo, owner = (a[order] for a in (ray, t, delta, sigma, albedo, owner))
    tau = sigma * delta
    total = np.cumsum(tau)
    new = np.r_[True, ray[1:] != ray[:-1]]
    lead = np.flatnonzero(new)
    before = total - tau - (total[lead] - tau[lead])[np.cumsum(new) - 1]
    weight = np.exp(-before) * -np.expm1(-tau)  # T_i alpha_i
    alpha = np.bincount(ray, weight, minlength=n)
    for c in range(3):
        rgb_sum[:, c] = np.bincount(ray, weight * albedo[:, c], minlength=n)
    cross = (before < LN2) & (before + tau >= LN2)
    with np.errstate(divide="ignore", invalid="ignore"):
        depth_t[ray[cross]] = (t[cross] - 0.5 * delta[cross]) + (LN2 - before[cross]) / sigma[cross]
    for k in range(k_objects):
        mine = owner == k
        shares[k] = np.bincount(ray[mine], weight[mine], minlength=n)
        alone[k] = -np.expm1(-np.bincount(ray[mine], tau[mine], minlength=n))
    return alpha, depth_t, rgb_sum, shares, alone


def render_per_sample(model: Any, scene: Scene, *, samples: int = 48) -> RenderOutput:
    """Render ``scene`` with ``samples`` model queries per ray and box (module doc)."""
    with heavy_work():  # the settings render_scene runs under, so the two compare fairly
        return _render(model, scene, samples)


def _render(model: Any, scene: Scene, samples: int) -> RenderOutput:
    cam = scene.camera
    h, w = cam.height, cam.width
    n, k_objects = h * w, len(scene.objects)
    rays = pixel_rays(cam)
    alpha, depth_t, rgb_sum = np.zeros(n), np.full(n, np.inf), np.zeros((n, 3))
    shares, alone = np.zeros((k_objects, n)), np.zeros((k_objects, n))
    for start in range(0, n, CHUNK_RAYS):
        sl = slice(start, start + CHUNK_RAYS)
        alpha[sl], depth_t[sl], rgb_sum[sl], shares[:, sl], alone[:, sl] = _chunk(
            model, scene, rays.origins[sl], rays.directions[sl], samples)
    behind = backdrop_image(scene.backdrop, h, w).reshape(n, 3)
    rgb = rgb_sum + (1.0 - alpha)[:, None] * behind
    return RenderOutput(
        rgb=rgb.reshape(h, w, 3).astype(np.float32),
        depth=(depth_t * rays.z_per_t).reshape(h, w).astype(np.float32),
        alpha=alpha.reshape(h, w).astype(np.float32),
        weights=shares.reshape(k_objects, h, w).astype(np.float32),
        amodal=(alone >= MASK_ALPHA).reshape(k_objects, h, w),
        normals=np.zeros((h, w, 3), np.float32),
        object_ids=tuple(obj.id for obj in scene.objects),
    )
