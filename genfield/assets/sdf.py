"""Signed distance functions: a few exact primitives and the CSG operations that combine them.

Every node maps points ``(N, 3) float64`` to signed distances ``(N,) float64`` (negative inside)
and knows an axis-aligned box that holds its solid. The primitives are exact Euclidean distances
(formulas as in Quilez, "distance functions", and for the polygon the winding-sign form of the
same page). Union, intersection and difference by min/max are *bounds*: |f| <= true distance
(exact outside a union), so f stays 1-Lipschitz and sphere tracing (Hart 1996, "Sphere
tracing", section 2) may step by f without passing through a surface. Rigid transforms and
uniform scaling (with f divided by the scale) keep exact distances exact.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

Bounds = tuple[np.ndarray, np.ndarray]  # (lo (3,), hi (3,))


class Node:
    """A signed distance function with a bounding box."""

    exact = True  # True where ``distance`` is the Euclidean distance, False for a bound

    def distance(self, p: np.ndarray) -> np.ndarray:  # (N, 3) -> (N,)
        raise NotImplementedError

    def bounds(self) -> Bounds:
        raise NotImplementedError


def _len2(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    return np.sqrt(x * x + y * y)


def _box2(qx: np.ndarray, qy: np.ndarray) -> np.ndarray:
    """Exact distance of a 2D box given folded coordinates q = |p| - half (Quilez, sdBox)."""
    outside = _len2(np.maximum(qx, 0.0), np.maximum(qy, 0.0))
    return outside + np.minimum(np.maximum(qx, qy), 0.0)


@dataclass(frozen=True, eq=False)
class Sphere(Node):
    radius: float
    centre: tuple[float, float, float] = (0.0, 0.0, 0.0)

    def distance(self, p):
        return np.linalg.norm(p - np.asarray(self.centre), axis=1) - self.radius

    def bounds(self):
        c = np.asarray(self.centre, dtype=np.float64)
        return c - self.radius, c + self.radius


@dataclass(frozen=True, eq=False)
class Box(Node):
    """Axis-aligned box from ``lo`` to ``hi``."""

    lo: tuple[float, float, float]
    hi: tuple[float, float, float]

    def distance(self, p):
        lo, hi = np.asarray(self.lo), np.asarray(self.hi)
        q = np.abs(p - (lo + hi) / 2.0) - (hi - lo) / 2.0  # (N, 3)
        outside = np.linalg.norm(np.maximum(q, 0.0), axis=1)
        return outside + np.minimum(q.max(axis=1), 0.0)

    def bounds(self):
        return np.asarray(self.lo, dtype=np.float64), np.asarray(self.hi, dtype=np.float64)


@dataclass(frozen=True, eq=False)
class Torus(Node):
    """Torus around the z axis: ``major`` radius of the tube's centre line, ``minor`` of the tube."""

    major: float
    minor: float

    def distance(self, p):
        return _len2(_len2(p[:, 0], p[:, 1]) - self.major, p[:, 2]) - self.minor

    def bounds(self):
        r = self.major + self.minor
        return np.array([-r, -r, -self.minor]), np.array([r, r, self.minor])


@dataclass(frozen=True, eq=False)
class Cylinder(Node):
    """Capped cylinder around the z axis, z in [-half_height, half_height]."""

    radius: float
    half_height: float

    def distance(self, p):
        return _box2(_len2(p[:, 0], p[:, 1]) - self.radius, np.abs(p[:, 2]) - self.half_height)

    def bounds(self):
        r, h = self.radius, self.half_height
        return np.array([-r, -r, -h]), np.array([r, r, h])


_HEX_K = (-0.8660254037844386, 0.5, 0.5773502691896258)  # (-cos 30, sin 30, tan 30)


@dataclass(frozen=True, eq=False)
class HexPrism(Node):
    """Hexagonal prism around the z axis; ``apothem`` is half the width across flats, the flats
    face +-y, z in [-half_height, half_height] (exact, Quilez sdHexPrism)."""

    apothem: float
    half_height: float

    def distance(self, p):
        kx, ky, kz = _HEX_K
        a = np.abs(p)
        dot = np.minimum(kx * a[:, 0] + ky * a[:, 1], 0.0)
        x = a[:, 0] - 2.0 * dot * kx
        y = a[:, 1] - 2.0 * dot * ky
        cx = np.clip(x, -kz * self.apothem, kz * self.apothem)
        dx = _len2(x - cx, y - self.apothem) * np.sign(y - self.apothem)
        dz = a[:, 2] - self.half_height
        return np.minimum(np.maximum(dx, dz), 0.0) + _len2(np.maximum(dx, 0.0), np.maximum(dz, 0.0))

    def bounds(self):
        circum = self.apothem / np.cos(np.pi / 6.0)
        return (np.array([-circum, -self.apothem, -self.half_height]),
                np.array([circum, self.apothem, self.half_height]))


@dataclass(frozen=True, eq=False)
class Revolved(Node):
    """Solid of revolution about z of a simple polygon in the (r, z) half-plane, r >= 0.

    The distance is the exact 2D distance to the polygon at (sqrt(x^2 + y^2), z): the nearest
    point of a solid of revolution lies in the query's own meridian half-plane. Inside/outside
    by the crossing rule of Quilez's sdPolygon. ``profile`` is (V, 2), in either orientation.
    """

    profile: np.ndarray = field(repr=False)

    def __post_init__(self):
        v = np.asarray(self.profile, dtype=np.float64)
        if v.ndim != 2 or v.shape[1] != 2 or (v[:, 0] < -1e-12).any():
            raise ValueError("a profile is (V, 2) with r >= 0")
        keep = np.linalg.norm(v - np.roll(v, 1, axis=0), axis=1) > 1e-12  # no zero-length edges
        if keep.sum() < 3:
            raise ValueError("a profile needs at least three distinct vertices")
        object.__setattr__(self, "profile", v[keep])

    def distance(self, p):
        v = self.profile
        px, py = _len2(p[:, 0], p[:, 1]), p[:, 2]
        d2 = (px - v[0, 0]) ** 2 + (py - v[0, 1]) ** 2
        odd = np.zeros(len(px), dtype=bool)  # crossing parity: odd means inside
        for i in range(len(v)):
            j = i - 1
            ex, ey = v[j, 0] - v[i, 0], v[j, 1] - v[i, 1]
            wx, wy = px - v[i, 0], py - v[i, 1]
            h = np.clip((wx * ex + wy * ey) * (1.0 / (ex * ex + ey * ey)), 0.0, 1.0)
            bx, by = wx - ex * h, wy - ey * h
            np.minimum(d2, bx * bx + by * by, out=d2)
            c1, c2, c3 = py >= v[i, 1], py < v[j, 1], ex * wy > ey * wx
            odd ^= (c1 == c2) & (c2 == c3)  # all three true or all three false
        return np.where(odd, -1.0, 1.0) * np.sqrt(d2)

    def bounds(self):
        r = self.profile[:, 0].max()
        return (np.array([-r, -r, self.profile[:, 1].min()]),
                np.array([r, r, self.profile[:, 1].max()]))


@dataclass(frozen=True, eq=False)
class HalfSpace(Node):
    """Points with ``sign * (x[axis] - value) <= 0``: an axis-aligned half-space (exact)."""

    axis: int
    value: float
    sign: float = 1.0

    def distance(self, p):
        return self.sign * (p[:, self.axis] - self.value)

    def bounds(self):
        lo, hi = np.full(3, -np.inf), np.full(3, np.inf)
        (hi if self.sign > 0 else lo)[self.axis] = self.value
        return lo, hi


@dataclass(frozen=True, eq=False)
class Union(Node):
    parts: tuple[Node, ...]
    exact = False

    def distance(self, p):
        return np.minimum.reduce([n.distance(p) for n in self.parts])

    def bounds(self):
        b = [n.bounds() for n in self.parts]
        return np.min([lo for lo, _ in b], axis=0), np.max([hi for _, hi in b], axis=0)


@dataclass(frozen=True, eq=False)
class Intersection(Node):
    parts: tuple[Node, ...]
    exact = False

    def distance(self, p):
        return np.maximum.reduce([n.distance(p) for n in self.parts])

    def bounds(self):
        b = [n.bounds() for n in self.parts]
        return np.max([lo for lo, _ in b], axis=0), np.min([hi for _, hi in b], axis=0)


@dataclass(frozen=True, eq=False)
class Difference(Node):
    """``keep`` with every ``cut`` removed: max(f_keep, -f_cut...)."""

    keep: Node
    cuts: tuple[Node, ...]
    exact = False

    def distance(self, p):
        return np.maximum.reduce([self.keep.distance(p), *[-c.distance(p) for c in self.cuts]])

    def bounds(self):
        return self.keep.bounds()


@dataclass(frozen=True, eq=False)
class Moved(Node):
    """``node`` rotated by ``rotation`` (3x3) then translated by ``translation`` (exact stays exact)."""

    node: Node
    rotation: np.ndarray = field(default_factory=lambda: np.eye(3), repr=False)
    translation: tuple[float, float, float] = (0.0, 0.0, 0.0)

    @property
    def exact(self):  # type: ignore[override]
        return self.node.exact

    def distance(self, p):
        local = (p - np.asarray(self.translation)) @ np.asarray(self.rotation)  # R^T (p - t)
        return self.node.distance(local)

    def bounds(self):
        lo, hi = self.node.bounds()
        corners = np.array([[x, y, z] for x in (lo[0], hi[0]) for y in (lo[1], hi[1])
                            for z in (lo[2], hi[2])])
        moved = corners @ np.asarray(self.rotation).T + np.asarray(self.translation)
        return moved.min(axis=0), moved.max(axis=0)


@dataclass(frozen=True, eq=False)
class Scaled(Node):
    """``node`` seen through ``q = offset + scale * p``: f(p) = node(q) / scale.

    This is how a family built in metres becomes an asset in the object cube: ``offset`` is the
    metric centre and ``scale`` the metres one object unit stands for.
    """

    node: Node
    scale: float
    offset: tuple[float, float, float] = (0.0, 0.0, 0.0)

    @property
    def exact(self):  # type: ignore[override]
        return self.node.exact

    def distance(self, p):
        return self.node.distance(np.asarray(self.offset) + self.scale * p) / self.scale

    def bounds(self):
        lo, hi = self.node.bounds()
        off = np.asarray(self.offset)
        return (lo - off) / self.scale, (hi - off) / self.scale


def rotation_x(angle: float) -> np.ndarray:
    """Rotation about x by ``angle`` radians, (3, 3)."""
    c, s = np.cos(angle), np.sin(angle)
    return np.array([[1.0, 0.0, 0.0], [0.0, c, -s], [0.0, s, c]])


def rotation_y(angle: float) -> np.ndarray:
    """Rotation about y by ``angle`` radians, (3, 3)."""
    c, s = np.cos(angle), np.sin(angle)
    return np.array([[c, 0.0, s], [0.0, 1.0, 0.0], [-s, 0.0, c]])


def gradient(node: Node, p: np.ndarray, h: float = 1e-5) -> np.ndarray:
    """Central-difference gradient of ``node`` at ``p`` (N, 3) -> (N, 3), not normalised."""
    g = np.empty_like(p)
    for axis in range(3):
        step = np.zeros(3)
        step[axis] = h
        g[:, axis] = (node.distance(p + step) - node.distance(p - step)) / (2.0 * h)
    return g
