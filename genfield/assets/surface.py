"""Points on the surface of a CSG tree of primitives, exactly uniform by area.

The surface of a union, intersection or difference is a subset of the union of its primitives'
surfaces. So: sample every primitive's surface uniformly by area (each in closed form), map the
points into the object frame, and keep those where the whole tree's distance is zero. What is
kept is uniform over the tree's surface, and the share kept times the primitives' total area is
an unbiased estimate of the tree's area. Half-spaces (infinite planes) are sampled within the
bounding box of the intersection they clip.

Primitive areas: torus 4 pi^2 R r (Pappus); frustum of a revolved edge pi (r0 + r1) L (Pappus's
first theorem); the rest are flat faces.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from genfield.assets import sdf

ON_SURFACE = 1e-9  # |f| of a kept point, object units (the points are on a primitive exactly)


@dataclass(frozen=True)
class _Leaf:
    node: sdf.Node
    a: np.ndarray  # (3, 3) leaf frame -> object frame, a similarity s R
    b: np.ndarray  # (3,)
    area_scale: float  # s^2
    clip: tuple[np.ndarray, np.ndarray] | None  # box in the leaf frame (half-spaces only)

    def area(self) -> float:
        return _area(self.node, self.clip) * self.area_scale

    def sample(self, n: int, g: np.random.Generator) -> np.ndarray:
        """n points uniform on this primitive, object frame (n, 3)."""
        return _sample(self.node, self.clip, n, g) @ self.a.T + self.b

    def holds(self, p: np.ndarray) -> np.ndarray:
        """(N,) bool: object-frame points on this primitive's (clipped) surface."""
        local = (p - self.b) @ np.linalg.inv(self.a).T
        on = np.abs(self.node.distance(local)) * math.sqrt(self.area_scale) < ON_SURFACE
        if self.clip is not None:
            on &= ((local >= self.clip[0] - ON_SURFACE) & (local <= self.clip[1] + ON_SURFACE)).all(axis=1)
        return on


def _box_in(lo, hi, rotation, translation) -> tuple[np.ndarray, np.ndarray]:
    """AABB of the box (lo, hi) mapped by x -> rotation^T (x - translation)."""
    corners = np.array([[x, y, z] for x in (lo[0], hi[0]) for y in (lo[1], hi[1]) for z in (lo[2], hi[2])])
    local = (corners - translation) @ rotation
    return local.min(axis=0), local.max(axis=0)


def _leaves(node: sdf.Node, a, b, area_scale, clip) -> list[_Leaf]:
    if isinstance(node, sdf.Union):
        return [x for n in node.parts for x in _leaves(n, a, b, area_scale, clip)]
    if isinstance(node, sdf.Intersection | sdf.Difference):
        lo, hi = node.bounds()
        if clip is not None:
            lo, hi = np.maximum(lo, clip[0]), np.minimum(hi, clip[1])
        parts = node.parts if isinstance(node, sdf.Intersection) else (node.keep, *node.cuts)
        return [x for n in parts for x in _leaves(n, a, b, area_scale, (lo, hi))]
    if isinstance(node, sdf.Moved):
        r, t = np.asarray(node.rotation), np.asarray(node.translation, dtype=np.float64)
        inner = None if clip is None else _box_in(*clip, r, t)
        return _leaves(node.node, a @ r, a @ t + b, area_scale, inner)
    if isinstance(node, sdf.Scaled):
        s, o = node.scale, np.asarray(node.offset, dtype=np.float64)
        inner = None if clip is None else (o + s * clip[0], o + s * clip[1])
        return _leaves(node.node, a / s, b - (a @ o) / s, area_scale / s**2, inner)
    return [_Leaf(node, a, b, area_scale, clip)]


def _area(node: sdf.Node, clip) -> float:
    if isinstance(node, sdf.Sphere):
        return 4.0 * math.pi * node.radius**2
    if isinstance(node, sdf.Box):
        e = np.asarray(node.hi) - np.asarray(node.lo)
        return 2.0 * float(e[0] * e[1] + e[1] * e[2] + e[0] * e[2])
    if isinstance(node, sdf.Torus):
        return 4.0 * math.pi**2 * node.major * node.minor
    if isinstance(node, sdf.Cylinder | sdf.Revolved):
        return float(_frusta(_profile(node))[1].sum())
    if isinstance(node, sdf.HexPrism):
        side = 2.0 * node.apothem / math.sqrt(3.0)
        return 6.0 * side * 2.0 * node.half_height + 2.0 * 2.0 * math.sqrt(3.0) * node.apothem**2
    if isinstance(node, sdf.HalfSpace):
        if clip is None or not np.isfinite(clip[0]).all() or not np.isfinite(clip[1]).all():
            raise ValueError("a half-space has a surface only inside an intersection's box")
        e = np.delete(np.maximum(clip[1] - clip[0], 0.0), node.axis)
        return float(e[0] * e[1])
    raise TypeError(f"no surface sampler for {type(node).__name__}")


def _profile(node) -> np.ndarray:
    if isinstance(node, sdf.Cylinder):
        r, h = node.radius, node.half_height
        return np.array([(0.0, -h), (r, -h), (r, h), (0.0, h)])
    return node.profile


def _frusta(v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Edges (E, 2, 2) of a closed profile and the area each sweeps about z, pi (r0 + r1) L."""
    edges = np.stack([v, np.roll(v, -1, axis=0)], axis=1)
    length = np.linalg.norm(edges[:, 1] - edges[:, 0], axis=1)
    return edges, math.pi * (edges[:, 0, 0] + edges[:, 1, 0]) * length


def _on_triangles(tri: np.ndarray, g: np.random.Generator) -> np.ndarray:
    """One uniform point in each triangle (n, 3, 3): Osada et al. 2002, eq. 1 (square-root trick)."""
    r1, r2 = np.sqrt(g.random(len(tri)))[:, None], g.random(len(tri))[:, None]
    return (1 - r1) * tri[:, 0] + r1 * (1 - r2) * tri[:, 1] + r1 * r2 * tri[:, 2]


def _sample(node: sdf.Node, clip, n: int, g: np.random.Generator) -> np.ndarray:
    """n points uniform by area on one primitive's surface, leaf frame, (n, 3)."""
    if isinstance(node, sdf.Sphere):
        d = g.normal(size=(n, 3))
        return np.asarray(node.centre) + node.radius * d / np.linalg.norm(d, axis=1, keepdims=True)
    if isinstance(node, sdf.Box):
        lo, hi = np.asarray(node.lo, dtype=np.float64), np.asarray(node.hi, dtype=np.float64)
        e = hi - lo
        face_area = np.array([e[1] * e[2], e[0] * e[2], e[0] * e[1]]).repeat(2)  # -x +x -y ...
        face = g.choice(6, size=n, p=face_area / face_area.sum())
        p = lo + g.random((n, 3)) * e
        axis = face // 2
        p[np.arange(n), axis] = np.where(face % 2 == 0, lo[axis], hi[axis])
        return p
    if isinstance(node, sdf.Torus):
        big, small = node.major, node.minor
        theta = np.empty(0)
        while len(theta) < n:  # density of the tube angle is proportional to R + r cos(theta)
            t = g.uniform(0.0, 2 * math.pi, 2 * n)
            theta = np.concatenate([theta, t[g.random(2 * n) * (big + small) < big + small * np.cos(t)]])
        theta, phi = theta[:n], g.uniform(0.0, 2 * math.pi, n)
        ring = big + small * np.cos(theta)
        return np.stack([ring * np.cos(phi), ring * np.sin(phi), small * np.sin(theta)], axis=1)
    if isinstance(node, sdf.Cylinder | sdf.Revolved):
        edges, area = _frusta(_profile(node))
        k = g.choice(len(edges), size=n, p=area / area.sum())
        (r0, z0), (r1, z1) = edges[k, 0].T, edges[k, 1].T
        u = g.random(n)
        dr = r1 - r0
        # the swept area grows with r along the edge: invert the CDF (r0 t + dr t^2 / 2) / (...)
        safe = np.where(np.abs(dr) > 1e-12, dr, 1.0)
        t = np.where(np.abs(dr) > 1e-12, (np.sqrt(r0**2 + (r1**2 - r0**2) * u) - r0) / safe, u)
        r, z, phi = r0 + dr * t, z0 + (z1 - z0) * t, g.uniform(0.0, 2 * math.pi, n)
        return np.stack([r * np.cos(phi), r * np.sin(phi), z], axis=1)
    if isinstance(node, sdf.HexPrism):
        a, h = node.apothem, node.half_height
        corner = 2.0 * a / math.sqrt(3.0) * np.array(
            [(math.cos(k * math.pi / 3), math.sin(k * math.pi / 3)) for k in range(7)])
        side_area, cap_area = 6.0 * (2.0 * a / math.sqrt(3.0)) * 2.0 * h, 2.0 * math.sqrt(3.0) * a * a
        on_side = g.random(n) < side_area / (side_area + 2.0 * cap_area)
        k = g.integers(0, 6, n)
        u = g.random(n)[:, None]
        xy_side = corner[k] + u * (corner[k + 1] - corner[k])
        tri = np.zeros((n, 3, 3))
        tri[:, 1, :2], tri[:, 2, :2] = corner[k], corner[k + 1]
        xy_cap = _on_triangles(tri, g)[:, :2]
        z = np.where(on_side, g.uniform(-h, h, n), np.where(g.random(n) < 0.5, -h, h))
        return np.concatenate([np.where(on_side[:, None], xy_side, xy_cap), z[:, None]], axis=1)
    if isinstance(node, sdf.HalfSpace):
        lo, hi = clip
        p = lo + g.random((n, 3)) * (hi - lo)
        p[:, node.axis] = node.value
        return p
    raise TypeError(f"no surface sampler for {type(node).__name__}")


def _kept(node: sdf.Node, leaves: list[_Leaf], i: int, p: np.ndarray) -> np.ndarray:
    """(N,) bool: points of leaf ``i`` on the tree's surface and on no earlier leaf (coplanar
    faces of two primitives, like the shared floor face of a bracket's legs, count once)."""
    keep = np.abs(node.distance(p)) < ON_SURFACE
    for earlier in leaves[:i]:
        idx = np.flatnonzero(keep)
        keep[idx[earlier.holds(p[idx])]] = False
    return keep


def sample_csg_surface(node: sdf.Node, count: int, g: np.random.Generator) -> np.ndarray:
    """``count`` points (count, 3) uniform by area on the surface of ``node`` (object frame)."""
    leaves = _leaves(node, np.eye(3), np.zeros(3), 1.0, None)
    areas = np.array([leaf.area() for leaf in leaves])
    out, have, batch = [], 0, 2 * count + 1024
    for _ in range(100):
        counts = g.multinomial(batch, areas / areas.sum())
        for i, (leaf, m) in enumerate(zip(leaves, counts, strict=True)):
            if m:
                p = leaf.sample(int(m), g)
                out.append(p[_kept(node, leaves, i, p)])
                have += len(out[-1])
        if have >= count:
            break
        rate = max(have / batch, 1e-3)
        batch = int(min(1.2 * (count - have) / rate + 1024, 20 * count))
    points = np.concatenate(out)
    if len(points) < count:
        raise ValueError("the shape has (almost) no surface")
    return points[g.permutation(len(points))[:count]]


def surface_area(node: sdf.Node, samples: int, g: np.random.Generator) -> float:
    """Monte Carlo estimate of the area of ``node``'s surface (object units squared)."""
    leaves = _leaves(node, np.eye(3), np.zeros(3), 1.0, None)
    areas = np.array([leaf.area() for leaf in leaves])
    total = 0.0
    for i, leaf in enumerate(leaves):
        p = leaf.sample(max(int(samples * areas[i] / areas.sum()), 1), g)
        total += areas[i] * float(np.mean(_kept(node, leaves, i, p)))
    return total
