"""Baked fields: density and albedo on a regular grid over the object cube [-1, 1]^3.

This is the hand-over between the field (which bakes a grid for a pair of codes) and the
renderer and mesh extractor (which sample grids, never the network, on the fast path).

Grid layout: ``density[i, j, k]`` is the value at
``(x, y, z) = (-1 + 2 i / (R - 1), -1 + 2 j / (R - 1), -1 + 2 k / (R - 1))``, i.e. numpy
``indexing="ij"`` with x along axis 0, and grid points on the cube's faces (corner-aligned,
``align_corners=True`` in torch's ``grid_sample``, which takes (x, y, z) as (W, H, D) so a
torch volume is ``density.transpose(2, 1, 0)``).

Density is in units of 1 / (object-frame length); a renderer divides by the object's scale
to get 1 / metre. Occupancy o in [0, 1] becomes density ``SIGMA_MAX * o``, so the same
field renders alike whether it came from the network or from an analytic SDF.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

# Density of solid material, per object-frame unit. One grid cell of a 64^3 grid (2/63 units)
# of solid has optical depth ~12.7, i.e. transmittance 3e-6: surfaces are opaque within a cell.
SIGMA_MAX = 400.0


def density_from_occupancy(occupancy: np.ndarray) -> np.ndarray:
    """Occupancy in [0, 1] to density (same shape)."""
    return SIGMA_MAX * np.asarray(occupancy)


def occupancy_from_sdf(sdf: np.ndarray, width: float) -> np.ndarray:
    """A soft inside indicator of a signed distance (negative inside): sigmoid(-sdf / width).

    ``width`` is the transition half-width in object units; about one grid cell keeps a baked
    grid free of aliasing while the 0.5 level set stays exactly on the surface.
    """
    return 1.0 / (1.0 + np.exp(np.clip(np.asarray(sdf) / width, -60.0, 60.0)))


def box_filter(mask: np.ndarray, *, grow: bool, radius: int = 1) -> np.ndarray:
    """Binary dilation (``grow``) or erosion of a 3-D mask by the (2 radius + 1)^3 box, beyond
    the array nothing: what ``scipy.ndimage.binary_dilation`` / ``binary_erosion(...,
    border_value=0)`` with ``np.ones((3, 3, 3))`` and ``iterations=radius`` give, done as
    one-axis passes (a box is a sum of segments), about 5x faster on bake-sized grids."""
    op = np.logical_or if grow else np.logical_and
    out = np.asarray(mask, bool)
    for _ in range(radius):
        for axis in range(3):
            src = np.moveaxis(out, axis, 0)
            res = src.copy()
            op(res[1:], src[:-1], out=res[1:])
            op(res[:-1], src[1:], out=res[:-1])
            if not grow:  # the outside counts as empty
                res[0] = res[-1] = False
            out = np.moveaxis(res, 0, axis)
    return np.ascontiguousarray(out)


def grid_points(resolution: int) -> np.ndarray:
    """The (R, R, R, 3) object-frame coordinates of a grid's points, ``indexing="ij"``."""
    axis = np.linspace(-1.0, 1.0, resolution)
    return np.stack(np.meshgrid(axis, axis, axis, indexing="ij"), axis=-1)


@dataclass(frozen=True)
class FieldGrid:
    """One object's baked field.

    density: (R, R, R) float32, per object unit; albedo: (R, R, R, 3) float32 linear RGB.
    """

    density: np.ndarray
    albedo: np.ndarray

    def __post_init__(self) -> None:
        r = self.density.shape[0]
        if self.density.shape != (r, r, r) or self.albedo.shape != (r, r, r, 3):
            raise ValueError(
                f"a FieldGrid needs density (R, R, R) and albedo (R, R, R, 3), "
                f"got {self.density.shape} and {self.albedo.shape}"
            )

    @property
    def resolution(self) -> int:
        return int(self.density.shape[0])

    @property
    def cell(self) -> float:
        """Spacing of grid points in object units."""
        return 2.0 / (self.resolution - 1)
