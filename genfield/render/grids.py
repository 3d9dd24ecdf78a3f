"""A baked FieldGrid made ready for marching: torch volumes, density gradient, skipping grid.

The renderer never evaluates a network: it samples these volumes with trilinear
interpolation (torch ``grid_sample``, ``align_corners=True`` matches the corner-aligned
layout of genfield.field.grid) and reconstructs the density from the interpolated
occupancy o by a linear ramp about the surface level,

    sigma = SIGMA_MAX * clip(1/2 + SHARPNESS (o - 1/2), 0, 1),

which keeps the field's surface (o = 1/2) where the grid puts it but undoes the blur of
interpolation: a trilinear ramp a cell wide carries, at SIGMA_MAX = 400, optical depth ~12
per cell, so rendered plainly its outer fringe (o ~ 0.1) would already be opaque and every
silhouette would grow by most of a cell. With SHARPNESS 1 this is sigma = SIGMA_MAX * o.
Per object it keeps

- the density volume (1 channel, sampled where a step's fine cell is neither empty nor full),
- a feature volume (albedo and the density gradient, 6 channels, sampled only where a step
  carries visible weight),
- a fine state per grid cell: *empty* when its 8 corners all reconstruct to 0 (interpolation
  never leaves the range of the corners, so the whole cell has no density), *full* when they
  all reconstruct to SIGMA_MAX (the whole cell is opaque at SIGMA_MAX), *deep* when every
  cell within ``deep_cells`` (Chebyshev distance) is full, so that a ray at a point of a deep
  cell meets opaque matter for at least ``deep_cells`` cells ahead (optical depth
  SIGMA_MAX * deep_cells * cell >= TAU_DEEP), else *mixed*;
- a coarse grid for empty-space skipping: cells of ``STRIDE`` fine cells, *occupied* when any
  fine cell in them is not empty, dilated by one coarse cell, so that a whole coarse step of
  a ray (shorter than a coarse cell) can be judged from its first point.
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass

import numpy as np
import torch

from genfield.field.grid import SIGMA_MAX, FieldGrid, box_filter

SHARPNESS = 8.0  # slope of the density ramp about o = 1/2 (module doc); the ramp is 1/8 as wide
EMPTY_OCCUPANCY = 0.5 - 0.5 / SHARPNESS  # at or below: no density at all
SOLID_OCCUPANCY = 0.5 + 0.5 / SHARPNESS  # at or above: SIGMA_MAX
STRIDE = 4  # fine cells per coarse cell along each axis
EMPTY, MIXED, FULL, DEEP = 0, 1, 2, 3  # fine cell states (module doc)
TAU_DEEP = 12.0  # optical depth ahead of a deep cell at least (transmittance <= 6e-6)


@dataclass(frozen=True)
class RenderGrid:
    """One object's field, prepared for the marcher.

    density: (1, 1, R, R, R) float32 torch volume (axes z, y, x), SIGMA_MAX * occupancy
        (before ``reconstruct``). features: (1, 6, R, R, R): linear albedo, then the density
        gradient d(sigma)/d(x, y, z) per object unit squared. fine: ((R - 1)^3,) int8 cell
        states, flattened from ``indexing="ij"``; coarse: (C, C, C) bool occupied cells;
        deep_cells: the Chebyshev radius of full cells around a deep one.
    """

    density: torch.Tensor
    features: torch.Tensor
    fine: np.ndarray
    coarse: np.ndarray
    deep_cells: int

    @property
    def resolution(self) -> int:
        return int(self.density.shape[-1])

    @property
    def cell(self) -> float:
        """Fine grid spacing in object units."""
        return 2.0 / (self.resolution - 1)

    @property
    def coarse_cell(self) -> float:
        """Coarse cell size in object units."""
        return STRIDE * self.cell

    @property
    def nbytes(self) -> int:
        return int(self.density.nbytes + self.features.nbytes + self.fine.nbytes + self.coarse.nbytes)

    @property
    def is_empty(self) -> bool:
        return not bool(np.any(self.coarse))


def _corner_reduce(values: np.ndarray, reduce) -> np.ndarray:
    """(R - 1)^3 reduction (np.minimum, np.maximum) over the 8 corners of every cell of a
    (R, R, R) grid, one axis at a time."""
    values = reduce(values[:-1], values[1:])
    values = reduce(values[:, :-1], values[:, 1:])
    return reduce(values[:, :, :-1], values[:, :, 1:])


def deep_radius(resolution: int) -> int:
    """Cells of full matter a deep cell guarantees ahead: SIGMA_MAX * n * cell >= TAU_DEEP."""
    return max(1, int(np.ceil(TAU_DEEP / (SIGMA_MAX * 2.0 / (resolution - 1)))))


def cell_states(density: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Fine states ((R - 1)^3,) int8 and coarse occupancy (C, C, C) bool (module doc)."""
    lo, hi = _corner_reduce(density, np.minimum), _corner_reduce(density, np.maximum)
    empty = hi <= EMPTY_OCCUPANCY * SIGMA_MAX
    full = lo >= SOLID_OCCUPANCY * SIGMA_MAX
    n = deep_radius(density.shape[0])
    deep = box_filter(full, grow=False, radius=n)  # beyond the cube there is nothing: never deep
    fine = np.full(full.shape, MIXED, np.int8)
    fine[empty], fine[full], fine[deep] = EMPTY, FULL, DEEP
    c = -(-empty.shape[0] // STRIDE)  # coarse cells a side
    pad = c * STRIDE - empty.shape[0]
    blocks = np.pad(~empty, [(0, pad)] * 3).reshape(c, STRIDE, c, STRIDE, c, STRIDE)
    coarse = box_filter(blocks.any(axis=(1, 3, 5)), grow=True)
    return fine.ravel(), coarse


@dataclass(frozen=True)
class _DensityParts:
    """What ``prepare`` derives from a density grid alone."""

    volume: torch.Tensor  # (1, 1, R, R, R), axes z, y, x
    gradient: np.ndarray  # (3, R, R, R) d(sigma)/d(x, y, z), axes z, y, x
    fine: np.ndarray
    coarse: np.ndarray


# density parts of read-only density arrays that own their data (taken as immutable), by the
# array's id while it lives: a model hands out one such array for every grid of a shape
# (genfield.field.model), so a shape painted with a new appearance is prepared without
# computing its gradient and cell states again
_SHARED: dict[int, _DensityParts] = {}


def _density_parts(density: np.ndarray, cell: float) -> _DensityParts:
    shared = not density.flags.writeable and density.base is None
    if shared and id(density) in _SHARED:
        return _SHARED[id(density)]
    d = np.clip(density, 0.0, SIGMA_MAX).astype(np.float32)
    r = d.shape[0]
    gradient = np.empty((3, r, r, r), np.float32)
    for c, g in enumerate(np.gradient(d, cell)):  # central differences
        gradient[c] = g.transpose(2, 1, 0)
    volume = torch.from_numpy(np.ascontiguousarray(d.transpose(2, 1, 0)))[None, None]
    parts = _DensityParts(volume, gradient, *cell_states(d))
    if shared:
        _SHARED[id(density)] = parts
        weakref.finalize(density, _SHARED.pop, id(density), None)
    return parts


def prepare(grid: FieldGrid) -> RenderGrid:
    """Torch volumes, gradient and skipping grid of a baked FieldGrid."""
    density = np.asarray(grid.density, dtype=np.float32)
    if not np.all(np.isfinite(density)) or not np.all(np.isfinite(grid.albedo)):
        raise ValueError("a baked grid holds NaN or infinite values")
    parts = _density_parts(density, grid.cell)
    # numpy (x, y, z[, c]) "ij" -> torch (c, z, y, x): grid_sample reads (x, y, z) as (W, H, D);
    # each channel is written transposed into place (no concatenated copy in between)
    albedo = np.clip(grid.albedo, 0.0, 1.0)
    r = density.shape[0]
    features = np.empty((6, r, r, r), np.float32)
    for c in range(3):
        features[c] = albedo[..., c].transpose(2, 1, 0)
    features[3:] = parts.gradient
    return RenderGrid(density=parts.volume, features=torch.from_numpy(features)[None],
                      fine=parts.fine, coarse=parts.coarse, deep_cells=deep_radius(r))


def reconstruct(density: np.ndarray) -> np.ndarray:
    """Density (same shape) from interpolated grid density SIGMA_MAX * o (module doc)."""
    o = density * (1.0 / SIGMA_MAX)
    return SIGMA_MAX * np.clip(0.5 + SHARPNESS * (o - 0.5), 0.0, 1.0)


def sample(volume: torch.Tensor, points: np.ndarray) -> np.ndarray:
    """Trilinear samples (N, C) float32 of a (1, C, R, R, R) volume at object points (3, N)."""
    if points.shape[1] == 0:
        return np.zeros((0, volume.shape[1]), np.float32)
    g = torch.from_numpy(np.ascontiguousarray(points.T, dtype=np.float32)).view(1, 1, 1, -1, 3)
    with torch.inference_mode():
        out = torch.nn.functional.grid_sample(volume, g, mode="bilinear", padding_mode="border",
                                              align_corners=True)  # (1, C, 1, 1, N)
    return out[0, :, 0, 0, :].T.numpy()  # (N, C)
