"""A model with no network: fields from analytic signed distances and colour functions.

It has the two methods the renderer and the baseline need (``bake`` and ``query``), so the
renderer can be built and tested on geometry whose true surface is known exactly, and the
reference tracer can be run on the very same SDFs.

Codes: with n shapes registered, a shape code and an appearance code are vectors of length
n. The zero shape code is empty space; any other selects the shape of its largest entry
(``shape_code(i)`` is the one-hot vector), and likewise the appearance code selects whose
colour function paints the shape.

Distance functions follow Hart 1996 ("Sphere tracing", Visual Computer 12): sphere
|p - c| - r; axis-aligned box |max(q, 0)| + min(max(q), 0) with q = |p| - b; torus about z
|(|p_xy| - R, p_z)| - r.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from genfield.colour import srgb_to_linear
from genfield.errors import SourceError
from genfield.field.grid import FieldGrid, density_from_occupancy, grid_points, occupancy_from_sdf

SdfFn = Callable[[np.ndarray], np.ndarray]  # (N, 3) object frame -> (N,) signed distance, < 0 inside
ColourFn = Callable[[np.ndarray], np.ndarray]  # (N, 3) object frame -> (N, 3) sRGB in [0, 1]

# Half-width of the soft inside indicator of ``query``, object units: a nearly sharp surface.
# Volume rendering a soft occupancy directly grows silhouettes by a few widths (its tail adds
# optical depth along grazing rays): measured against the grid renderer at 65^3, mask IoU
# 0.967 at 0.004, 0.989 at 0.002 and 0.998 at 0.001.
DEFAULT_EDGE = 0.001
# A bake widens the transition to half a grid cell, so that the grid values still carry where
# the surface lies within a cell (measured on a sphere at 65^3: median depth error 0.06 cells,
# against 0.16 at one cell and a staircase of +-0.5 cells for a near-binary grid).
BAKE_EDGE_CELLS = 0.5


def sphere(radius: float, centre=(0.0, 0.0, 0.0)) -> SdfFn:
    """Signed distance to a sphere (Hart 1996)."""
    c = np.asarray(centre, dtype=np.float64)
    return lambda p: np.linalg.norm(np.asarray(p, np.float64) - c, axis=-1) - radius


def box(half_extents, centre=(0.0, 0.0, 0.0)) -> SdfFn:
    """Signed distance to an axis-aligned box (Hart 1996)."""
    b = np.asarray(half_extents, dtype=np.float64)
    c = np.asarray(centre, dtype=np.float64)

    def sdf(p: np.ndarray) -> np.ndarray:
        q = np.abs(np.asarray(p, np.float64) - c) - b  # (N, 3)
        return np.linalg.norm(np.maximum(q, 0.0), axis=-1) + np.minimum(q.max(axis=-1), 0.0)

    return sdf


def torus(major: float, minor: float) -> SdfFn:
    """Signed distance to a torus around the z axis (Hart 1996)."""

    def sdf(p: np.ndarray) -> np.ndarray:
        p = np.asarray(p, np.float64)
        ring = np.linalg.norm(p[..., :2], axis=-1) - major
        return np.hypot(ring, p[..., 2]) - minor

    return sdf


def union(*parts: SdfFn) -> SdfFn:
    """Union of solids: the minimum of their distances (exact outside, a bound inside)."""
    return lambda p: np.min(np.stack([f(p) for f in parts]), axis=0)


def constant_colour(srgb) -> ColourFn:
    """One sRGB colour everywhere."""
    c = np.asarray(srgb, dtype=np.float64).reshape(1, 3)
    return lambda p: np.broadcast_to(c, (len(p), 3))


@dataclass(frozen=True)
class AnalyticShape:
    """A named solid: its signed distance and its surface colour (sRGB)."""

    name: str
    sdf: SdfFn
    colour_srgb: ColourFn


class AnalyticModel:
    """bake/query of analytic solids, selected by one-hot-like codes (see the module doc).

    ``edge`` is the half-width (object units) of the occupancy transition
    (``genfield.field.grid.occupancy_from_sdf``); ``identity`` names the model for the disk
    cache of baked grids (None: grids are cached in memory only).
    """

    def __init__(self, shapes: Sequence[AnalyticShape], *, edge: float = DEFAULT_EDGE,
                 identity: str | None = None) -> None:
        if not shapes:
            raise ValueError("an AnalyticModel needs at least one shape")
        if edge <= 0:
            raise ValueError(f"edge must be > 0, got {edge}")
        self.shapes = tuple(shapes)
        self.edge = float(edge)
        if identity is not None:
            self.identity = identity

    @classmethod
    def from_assets(cls, assets: Sequence[Any], *, edge: float = DEFAULT_EDGE) -> AnalyticModel:
        """The built-in (analytic) ``genfield.assets.Asset`` s as shapes, in order.

        The identity hashes the assets' content and the edge, so baked grids of the same
        assets are found again on disk.
        """
        shapes = []
        for a in assets:
            if not a.analytic:
                raise SourceError("an imported mesh has no signed distance for an AnalyticModel",
                                  where=a.source, hint="use built-in family assets")
            shapes.append(AnalyticShape(a.name, a.sdf, a.colour_srgb))
        digest = hashlib.sha256(f"edge={edge!r}".encode())
        for a in assets:
            digest.update(a.content_hash.encode("ascii"))
        return cls(shapes, edge=edge, identity=f"analytic-{digest.hexdigest()[:32]}")

    @property
    def shape_dim(self) -> int:
        return len(self.shapes)

    @property
    def appearance_dim(self) -> int:
        return len(self.shapes)

    def shape_code(self, name_or_index: str | int) -> np.ndarray:
        """The one-hot code (n,) float32 of a shape."""
        i = self._index(name_or_index)
        code = np.zeros(len(self.shapes), np.float32)
        code[i] = 1.0
        return code

    def appearance_code(self, name_or_index: str | int) -> np.ndarray:
        """The one-hot code (n,) float32 of a shape's colour."""
        return self.shape_code(name_or_index)

    def empty_code(self) -> np.ndarray:
        """The shape code of empty space (all zeros)."""
        return np.zeros(len(self.shapes), np.float32)

    def _index(self, name_or_index: str | int) -> int:
        if isinstance(name_or_index, str):
            names = [s.name for s in self.shapes]
            if name_or_index not in names:
                raise KeyError(name_or_index)
            return names.index(name_or_index)
        return int(name_or_index)

    def _pick(self, code: np.ndarray, what: str) -> int | None:
        c = np.asarray(code, dtype=np.float32).reshape(-1)
        if c.shape != (len(self.shapes),):
            raise ValueError(f"{what} code must have {len(self.shapes)} entries, got {c.shape[0]}")
        return None if not np.any(c) else int(np.argmax(c))

    def _field(self, points: np.ndarray, shape: np.ndarray,
               appearance: np.ndarray, width: float) -> tuple[np.ndarray, np.ndarray]:
        pts = np.asarray(points, dtype=np.float64).reshape(-1, 3)
        si = self._pick(shape, "shape")
        ai = self._pick(appearance, "appearance")
        if si is None:
            occupancy = np.zeros(len(pts))
        else:
            occupancy = occupancy_from_sdf(self.shapes[si].sdf(pts), width)
        if ai is None:
            albedo = np.zeros((len(pts), 3))
        else:
            albedo = srgb_to_linear(self.shapes[ai].colour_srgb(pts))
        outside = np.any(np.abs(pts) > 1.0, axis=1)
        occupancy[outside] = 0.0
        return occupancy.astype(np.float32), albedo.astype(np.float32)

    def query(self, points: np.ndarray, shape: np.ndarray,
              appearance: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Occupancy (N,) and linear albedo (N, 3) float32 at object-frame points (N, 3)."""
        return self._field(points, shape, appearance, self.edge)

    def bake(self, shape: np.ndarray, appearance: np.ndarray, resolution: int) -> FieldGrid:
        """The field on a resolution^3 grid (genfield.field.grid layout), evaluated densely.

        The transition is widened to ``BAKE_EDGE_CELLS`` grid cells (if wider than ``edge``)
        so that the grid values carry the surface's position within a cell.
        """
        pts = grid_points(resolution).reshape(-1, 3)
        width = max(self.edge, BAKE_EDGE_CELLS * 2.0 / (resolution - 1))
        occupancy, albedo = self._field(pts, shape, appearance, width)
        r = resolution
        return FieldGrid(density=density_from_occupancy(occupancy).reshape(r, r, r).astype(np.float32),
                         albedo=albedo.reshape(r, r, r, 3))


def demo_shapes() -> tuple[AnalyticShape, ...]:
    """Five solids of distinct outline and colour, for tests and benchmarks."""
    return (
        AnalyticShape("ball", sphere(0.8), constant_colour((0.8, 0.25, 0.2))),
        AnalyticShape("brick", box((0.7, 0.45, 0.6)), constant_colour((0.2, 0.5, 0.8))),
        AnalyticShape("ring", torus(0.6, 0.25), constant_colour((0.9, 0.75, 0.2))),
        AnalyticShape("post", box((0.25, 0.25, 0.9)), constant_colour((0.3, 0.7, 0.35))),
        AnalyticShape("pair", union(sphere(0.45, (-0.4, 0.0, 0.0)), sphere(0.45, (0.45, 0.1, 0.2))),
                      constant_colour((0.7, 0.4, 0.8))),
    )
