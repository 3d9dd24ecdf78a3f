"""The reference tracer: exact first hits of rays with the training sources themselves.

Analytic assets are sphere traced (Hart 1996, "Sphere tracing: a geometric method for the
antialiased ray tracing of implicit surfaces": march t <- t + f(o + t d), safe because every
family's f is a 1-Lipschitz lower bound of the distance); imported meshes are ray cast by
trimesh (Embree through ``embreex``). No network and no volume rendering is involved, so this
is what the model's images and the renderer's labels are measured against.

Per pixel it returns the unlit albedo (linear RGB), the Lambert-lit colour
``albedo * (ambient + strength * max(0, n . l))`` (the direct term dropped in shadow when
``Light.shadows``; objects cast shadows, the floor does not), camera z-depth, the 1-based
position of the visible object in the list (0 = floor or nothing) and the world normal.
Pixels that hit nothing show the backdrop: top_srgb at the top edge to bottom_srgb at the
bottom, interpolated in sRGB at the pixel centre's height ((row + 0.5) / H), then linearised.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from genfield.assets.asset import CHUNK, Asset
from genfield.colour import srgb_to_linear
from genfield.render.camera import pixel_rays
from genfield.scene import Backdrop, Camera, Light, Pose

HIT_EPS = 1e-5  # a sphere-traced ray stops where f < HIT_EPS object units
MAX_STEPS = 128  # sphere-tracing steps; rays still marching then are finished by _finish
TAIL_STEP = 2e-4  # grid spacing of that finish, object units
OMEGA = 1.6  # over-relaxation of the first steps (the value Keinert et al. 2014 suggest)
NORMAL_STEP = 1e-5  # central-difference step of the SDF gradient, object units
SHADOW_OFFSET = 1e-3  # shadow rays start this far along the normal: object units (times the
# object's scale) on objects, metres on the floor


@dataclass(frozen=True)
class ReferenceImage:
    """One traced view. H x W pixels."""

    rgb_linear: np.ndarray  # (H, W, 3) float32 unlit albedo; backdrop where nothing is hit
    lit: np.ndarray  # (H, W, 3) float32 Lambert-lit colour; backdrop where nothing is hit
    depth: np.ndarray  # (H, W) float32 camera z-depth in metres; inf where nothing is hit
    instance: np.ndarray  # (H, W) int32: 0 floor or nothing, k = objects[k - 1]
    normals: np.ndarray  # (H, W, 3) float32 unit world normals; 0 where nothing is hit


@dataclass(frozen=True)
class _Hits:
    t: np.ndarray  # (N,) ray length in metres, inf on a miss
    normal: np.ndarray  # (N, 3) world, unit (0 on a miss)
    albedo: np.ndarray  # (N, 3) linear RGB (0 on a miss)


def _slab(o: np.ndarray, d: np.ndarray, lo: np.ndarray, hi: np.ndarray):
    """Ray-box entry and exit distances (N,), (N,) by the slab method (Kay and Kajiya 1986)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        inv = 1.0 / d
        t1, t2 = (lo - o) * inv, (hi - o) * inv
    t1, t2 = np.nan_to_num(t1, nan=-np.inf), np.nan_to_num(t2, nan=np.inf)
    near = np.minimum(t1, t2).max(axis=1)
    far = np.maximum(t1, t2).min(axis=1)
    return np.maximum(near, 0.0), far


def _sphere_trace(f, o: np.ndarray, d: np.ndarray, lo, hi) -> np.ndarray:
    """Object-frame ray lengths (N,) to the first f < HIT_EPS, inf where none (unit d).

    Over-relaxed steps t += OMEGA f (Keinert et al. 2014, "Enhanced sphere tracing"): while
    the unbounding spheres of consecutive points overlap, the segment between them is empty;
    when they do not (or a step lands inside), the ray goes back to the last point, takes the
    plain step f and stays unrelaxed from then on.
    """
    t, far = _slab(o, d, lo, hi)
    out = np.full(len(o), np.inf)
    idx = np.flatnonzero(t <= far)  # rays that meet the asset's box
    t = t[idx]
    t_prev, r_prev = t.copy(), np.zeros(len(idx))
    omega = np.full(len(idx), OMEGA)
    for _ in range(MAX_STEPS):
        if len(idx) == 0:
            break
        dist = f(o[idx] + t[:, None] * d[idx])  # (active,)
        step = t - t_prev
        fail = (omega > 1.0) & ((dist < 0.0) | (np.abs(dist) + r_prev < step))
        t = np.where(fail, t_prev + r_prev, t)  # back to the last point, a plain step
        omega[fail] = 1.0
        hit = ~fail & (dist < HIT_EPS)
        out[idx[hit]] = t[hit]
        t_prev = np.where(fail, t_prev, t)
        r_prev = np.where(fail, r_prev, dist)
        t = np.where(fail, t, t + omega * dist)
        alive = ~hit & (np.minimum(t, t_prev + r_prev) <= far[idx])  # a relaxed step past the
        # box's far side may still be undone, so the ray ends only when its plain step is past it
        idx, t, t_prev, r_prev, omega = idx[alive], t[alive], t_prev[alive], r_prev[alive], omega[alive]
    if len(idx):  # rays creeping along a surface they graze: finish them by dense samples
        start = np.where(omega > 1.0, t_prev + r_prev, t)
        out[idx] = _finish(f, o[idx], d[idx], np.minimum(start, t), far[idx])
    return out


def _finish(f, o: np.ndarray, d: np.ndarray, t0: np.ndarray, t1: np.ndarray) -> np.ndarray:
    """First t in [t0, t1] with f < TAIL_STEP / 2 on a grid of spacing TAIL_STEP, inf if none.

    All earlier grid points have f >= TAIL_STEP / 2, and with a 1-Lipschitz f their balls
    cover the segment, so no surface is skipped; the point found is within TAIL_STEP / 2 of
    the surface (like sphere tracing's own stop, a distance: along a grazing ray the depth
    is ill-conditioned, and these are the silhouette's grazing rays).
    """
    out = np.full(len(o), np.inf)
    n = int(np.ceil((t1 - t0).max() / TAIL_STEP)) + 1
    rows = max(1, (1 << 18) // n)  # bounded memory: rows * n points at once
    for s in range(0, len(o), rows):
        tt = t0[s:s + rows, None] + TAIL_STEP * np.arange(n)[None, :]  # (rows, n)
        p = o[s:s + rows, None, :] + tt[..., None] * d[s:s + rows, None, :]
        close = (f(p.reshape(-1, 3)).reshape(tt.shape) < TAIL_STEP / 2) & (tt <= t1[s:s + rows, None])
        first = np.argmax(close, axis=1)
        found = close[np.arange(len(tt)), first]
        out[s:s + rows][found] = tt[found, first[found]]
    return out


def _analytic_hits(asset: Asset, o: np.ndarray, d: np.ndarray):
    """(t (N,), normal (N, 3), albedo sRGB (N, 3)) in the object frame."""
    lo, hi = asset.geometry.node.bounds()
    t = _sphere_trace(asset.sdf, o, d, np.maximum(lo, -1.0) - 1e-3, np.minimum(hi, 1.0) + 1e-3)
    hit = np.isfinite(t)
    p = o[hit] + t[hit, None] * d[hit]  # (K, 3)
    n = np.empty_like(p)
    for axis in range(3):  # central differences of the distance
        step = np.zeros(3)
        step[axis] = NORMAL_STEP
        n[:, axis] = asset.sdf(p + step) - asset.sdf(p - step)
    return t, hit, p, n, asset.colour_srgb(p)


def _mesh_hits(asset: Asset, o: np.ndarray, d: np.ndarray):
    """Embree first hits: (t (N,), hit (N,), points, face normals facing the ray, sRGB)."""
    mesh = asset.mesh
    t = np.full(len(o), np.inf)
    lo, hi = mesh.bounds
    near, far = _slab(o, d, lo - 1e-3, hi + 1e-3)
    cand = np.flatnonzero(near <= far)
    faces = np.zeros(len(o), dtype=np.int64)
    if len(cand):
        tri, ray, loc = mesh.ray.intersects_id(o[cand], d[cand], multiple_hits=False,
                                               return_locations=True)
        if len(ray):
            dist = np.einsum("ij,ij->i", loc - o[cand[ray]], d[cand[ray]])
            ahead = dist >= 0.0
            t[cand[ray[ahead]]] = dist[ahead]
            faces[cand[ray[ahead]]] = tri[ahead]
    hit = np.isfinite(t)
    p = o[hit] + t[hit, None] * d[hit]
    n = mesh.face_normals[faces[hit]].copy()
    n[np.einsum("ij,ij->i", n, d[hit]) > 0] *= -1.0  # two-sided: the side the ray sees
    return t, hit, p, n, asset.geometry.face_colour_srgb(faces[hit], p)


def _object_hits(asset: Asset, pose: Pose, origins: np.ndarray, dirs: np.ndarray) -> _Hits:
    """First hits of world rays (N, 3) with one posed asset."""
    r, s = pose.R, pose.scale
    o = (origins - pose.t) @ r / s  # R^T (o - t) / s, object frame
    d = dirs @ r  # R^T d, still unit: object-frame length = world length / s
    t_obj, hit, p, n, srgb = (_analytic_hits if asset.analytic else _mesh_hits)(asset, o, d)
    normal = np.zeros_like(origins)
    normal[hit] = n @ r.T
    normal[hit] /= np.maximum(np.linalg.norm(normal[hit], axis=1, keepdims=True), 1e-12)
    albedo = np.zeros_like(origins)
    albedo[hit] = srgb_to_linear(srgb)
    return _Hits(t=t_obj * s, normal=normal, albedo=albedo)


def _first_hits(objects: Sequence[tuple[Asset, Pose]], origins, dirs):
    """Nearest object hit per ray: (t (N,), instance (N,) 1-based or 0, normal, albedo)."""
    n = len(origins)
    best = _Hits(np.full(n, np.inf), np.zeros((n, 3)), np.zeros((n, 3)))
    instance = np.zeros(n, dtype=np.int32)
    for k, (asset, pose) in enumerate(objects, start=1):
        h = _object_hits(asset, pose, origins, dirs)
        nearer = h.t < best.t
        best.t[nearer], best.normal[nearer], best.albedo[nearer] = h.t[nearer], h.normal[nearer], h.albedo[nearer]
        instance[nearer] = k
    return best, instance


def _backdrop(camera: Camera, backdrop: Backdrop) -> np.ndarray:
    """(H * W, 3) linear backdrop colour, row-major like the rays."""
    t = ((np.arange(camera.height) + 0.5) / camera.height)[:, None]  # (H, 1)
    srgb = (1 - t) * np.asarray(backdrop.top_srgb) + t * np.asarray(backdrop.bottom_srgb)  # (H, 3)
    return np.repeat(srgb_to_linear(srgb), camera.width, axis=0)


def trace_reference(camera: Camera, objects: Sequence[tuple[Asset, Pose]], *,
                    light: Light | None = None, backdrop: Backdrop | None = None) -> ReferenceImage:
    """Trace one view of posed assets; ``backdrop.floor`` adds the plane z = 0."""
    light = light or Light()
    backdrop = backdrop or Backdrop()
    rays = pixel_rays(camera)
    n = len(rays.origins)
    t = np.full(n, np.inf)
    instance = np.zeros(n, dtype=np.int32)
    normal, albedo = np.zeros((n, 3)), np.zeros((n, 3))
    for start in range(0, n, CHUNK):
        sl = slice(start, start + CHUNK)
        h, inst = _first_hits(objects, rays.origins[sl], rays.directions[sl])
        t[sl], instance[sl], normal[sl], albedo[sl] = h.t, inst, h.normal, h.albedo
    if backdrop.floor:
        oz, dz = rays.origins[:, 2], rays.directions[:, 2]
        with np.errstate(divide="ignore", invalid="ignore"):
            tf = np.where(dz * oz < 0, -oz / dz, np.inf)  # the ray heads towards z = 0
        floor = tf < t
        t[floor], instance[floor] = tf[floor], 0
        normal[floor] = (0.0, 0.0, 1.0)
        normal[floor & (oz < 0)] = (0.0, 0.0, -1.0)  # seen from below
        albedo[floor] = srgb_to_linear(np.asarray(backdrop.floor_srgb))
    hit = np.isfinite(t)
    l_dir = np.asarray(light.direction, dtype=np.float64)
    l_dir = l_dir / np.linalg.norm(l_dir)
    direct = light.strength * np.maximum(normal @ l_dir, 0.0)  # (N,)
    if light.shadows and objects:
        lit_side = np.flatnonzero(hit & (direct > 0))
        p = rays.origins[lit_side] + t[lit_side, None] * rays.directions[lit_side]
        scales = np.array([1.0] + [pose.scale for _, pose in objects])[instance[lit_side]]
        p = p + (SHADOW_OFFSET * scales)[:, None] * normal[lit_side]
        blocked, _ = _first_hits(objects, p, np.broadcast_to(l_dir, p.shape).copy())
        direct[lit_side[np.isfinite(blocked.t)]] = 0.0
    background = _backdrop(camera, backdrop)
    rgb = np.where(hit[:, None], albedo, background)
    lit = np.where(hit[:, None], albedo * (light.ambient + direct)[:, None], background)
    shape = (camera.height, camera.width)
    return ReferenceImage(
        rgb_linear=rgb.reshape(*shape, 3).astype(np.float32),
        lit=lit.reshape(*shape, 3).astype(np.float32),
        depth=(t * rays.z_per_t).reshape(shape).astype(np.float32),
        instance=instance.reshape(shape),
        normals=normal.reshape(*shape, 3).astype(np.float32),
    )
