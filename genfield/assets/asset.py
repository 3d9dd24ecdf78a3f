"""The training source every other package sees: an ``Asset`` in the object cube [-1, 1]^3.

An asset is centred, upright (z up) and scaled so that its largest half-extent is ``FIT``
object units (a margin of 0.1 to the cube's faces); ``metric_half_extent`` says how many metres
one object unit stands for, so meshes can be exported and objects posed at real scale
(``Pose.scale`` is that same half-extent). Its geometry answers three questions about
object-frame points: inside or not, which sRGB colour, and (analytic families only) the
signed distance in object units.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Protocol

import numpy as np

from genfield.assets.paint import Paint
from genfield.assets.sdf import Node
from genfield.assets.surface import sample_csg_surface
from genfield.errors import SourceError

FIT = 0.9  # largest half-extent of every asset, object units
CHUNK = 1 << 14  # points evaluated at once: bounded memory, and fastest (arrays stay in cache)


class Geometry(Protocol):
    def occupancy(self, points: np.ndarray) -> np.ndarray: ...  # (N, 3) -> (N,) float32
    def colour_srgb(self, points: np.ndarray) -> np.ndarray: ...  # (N, 3) -> (N, 3) float32

    def surface(self, count: int, g: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
        """``count`` points uniform by area on the surface (count, 3) and their sRGB (count, 3)."""
        ...


@dataclass(frozen=True, eq=False)
class AnalyticGeometry:
    """A family's shape and paint: ``node`` is already in object units (a ``Scaled`` node)."""

    node: Node
    paint: Paint

    def occupancy(self, points):
        return (self.node.distance(points) < 0.0).astype(np.float32)

    def colour_srgb(self, points):
        return self.paint.srgb(points)

    def sdf(self, points):
        return self.node.distance(points)

    def surface(self, count, g):
        points = sample_csg_surface(self.node, count, g)
        return points, self.paint.srgb(points)


def _chunked(fn, points: np.ndarray, width: int | None, dtype) -> np.ndarray:
    p = np.asarray(points, dtype=np.float64).reshape(-1, 3)
    shape = (len(p),) if width is None else (len(p), width)
    out = np.empty(shape, dtype=dtype)
    for start in range(0, len(p), CHUNK):
        out[start:start + CHUNK] = fn(p[start:start + CHUNK])
    return out


@dataclass(frozen=True, eq=False)
class Asset:
    """One training source.

    name: stable and unique: ``<family>-<index:04d>`` for built-ins with seed 0,
        ``<family>-<index:04d>-s<seed>`` for another seed; a mesh's file stem otherwise.
    family: the built-in family's name, or ``"mesh"`` for imported files.
    source: ``builtin:<family>:seed=<s>:index=<i>`` or the mesh file's path.
    metric_half_extent: metres that one object unit stands for (the cube's half-size).
    offset: metres; the original centre of the source (in the family's or the file's frame).
    content_hash: sha256 (hex) of what the asset is made of; the ground-truth cache key.
    parameters: the drawn parameters (families) or facts about the file (meshes), JSON-able.
    geometry: the inside test, colour and (analytic) distance over the object frame.
    """

    name: str
    family: str
    source: str
    metric_half_extent: float
    offset: tuple[float, float, float]
    content_hash: str
    parameters: Mapping[str, Any] = field(repr=False)
    geometry: Geometry = field(repr=False)

    @property
    def analytic(self) -> bool:
        """True for the built-in families, which have an exact (or bounding) signed distance."""
        return isinstance(self.geometry, AnalyticGeometry)

    @property
    def mesh(self):
        """The normalised ``trimesh.Trimesh`` of an imported asset (object units), else None."""
        return getattr(self.geometry, "mesh", None)

    def occupancy(self, points: np.ndarray) -> np.ndarray:
        """Inside test at object-frame points (N, 3) -> (N,) float32, 1 inside and 0 outside."""
        return _chunked(self.geometry.occupancy, points, None, np.float32)

    def colour_srgb(self, points: np.ndarray) -> np.ndarray:
        """sRGB colour at object-frame points (N, 3) -> (N, 3) float32 in [0, 1]."""
        return _chunked(self.geometry.colour_srgb, points, 3, np.float32)

    def sdf(self, points: np.ndarray) -> np.ndarray:
        """Signed distance in object units (N, 3) -> (N,) float64, negative inside; exact for
        primitives and solids of revolution, a lower bound (|f| <= distance) after CSG."""
        if not isinstance(self.geometry, AnalyticGeometry):
            raise SourceError("an imported mesh has no analytic signed distance", where=self.source,
                              hint="use occupancy(), or the reference tracer's mesh path")
        return _chunked(self.geometry.sdf, points, None, np.float64)
