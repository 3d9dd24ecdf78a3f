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

- the density volume (1 channel, sampled at every ray step),
- a feature volume (albedo and the density gradient, 6 channels, sampled only where a step
  carries visible weight),
- a coarse state grid for empty-space skipping: cells of ``STRIDE`` fine cells marked empty,
  mixed or solid. A cell is *empty* when no fine point on or inside it has an occupancy
  that reconstructs to any density (interpolation never exceeds its corners), dilated by
  one cell, so that a whole coarse step of a ray can be judged from one point; it is
  *solid* when every such point reconstructs to SIGMA_MAX and so do all 26 neighbours, so
  that a ray at a solid cell has at least one coarse cell of opaque matter ahead of it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import torch
from scipy import ndimage

from genfield.field.grid import SIGMA_MAX, FieldGrid

SHARPNESS = 8.0  # slope of the density ramp about o = 1/2 (module doc); the ramp is 1/8 as wide
EMPTY_OCCUPANCY = 0.5 - 0.5 / SHARPNESS  # at or below: no density at all
SOLID_OCCUPANCY = 0.5 + 0.5 / SHARPNESS  # at or above: SIGMA_MAX
STRIDE = 4  # fine cells per coarse cell along each axis; coarse ray steps are 4 fine steps
EMPTY, MIXED, SOLID = 0, 1, 2  # coarse cell states


@dataclass(frozen=True)
class RenderGrid:
    """One object's field, prepared for the marcher.

    density: (1, 1, R, R, R) float32 torch volume (axes z, y, x), SIGMA_MAX * occupancy
        (before ``reconstruct``). features: (1, 6, R, R, R): linear albedo, then the density gradient
        d(sigma)/d(x, y, z) per object unit squared. coarse: (C, C, C) int8 states, ``indexing="ij"``.
    """

    density: torch.Tensor
    features: torch.Tensor
    coarse: np.ndarray

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
        return int(self.density.nbytes + self.features.nbytes + self.coarse.nbytes)

    @property
    def is_empty(self) -> bool:
        return not bool(np.any(self.coarse))


def _pooled(values: np.ndarray, cells: int, reduce) -> np.ndarray:
    """(C, C, C) reduction over the closed coarse cells (STRIDE + 1 points a side) of a (R, R, R) grid."""
    size = cells * STRIDE + 1
    pad = size - values.shape[0]
    v = np.pad(values, [(0, pad)] * 3, mode="edge") if pad > 0 else values
    windows = np.lib.stride_tricks.sliding_window_view(v, (STRIDE + 1,) * 3)[::STRIDE, ::STRIDE, ::STRIDE]
    return reduce(windows, axis=(-3, -2, -1))  # (C, C, C)


def coarse_states(density: np.ndarray) -> np.ndarray:
    """The (C, C, C) int8 empty/mixed/solid states of a (R, R, R) density grid (module doc)."""
    cells = -(-(density.shape[0] - 1) // STRIDE)  # ceil((R - 1) / STRIDE)
    ball = np.ones((3, 3, 3), bool)
    occupied = ndimage.binary_dilation(_pooled(density, cells, np.max) > EMPTY_OCCUPANCY * SIGMA_MAX, ball)
    # border_value=0: a cell on the cube's face is never solid, the ray may leave there
    solid = ndimage.binary_erosion(_pooled(density, cells, np.min) >= SOLID_OCCUPANCY * SIGMA_MAX,
                                   ball, border_value=0)
    states = np.where(occupied, MIXED, EMPTY).astype(np.int8)
    states[solid] = SOLID
    return states


def prepare(grid: FieldGrid) -> RenderGrid:
    """Torch volumes, gradient and skipping grid of a baked FieldGrid."""
    density = np.asarray(grid.density, dtype=np.float32)
    if not np.all(np.isfinite(density)) or not np.all(np.isfinite(grid.albedo)):
        raise ValueError("a baked grid holds NaN or infinite values")
    density = np.clip(density, 0.0, SIGMA_MAX).astype(np.float32)
    gradient = np.stack(np.gradient(density, grid.cell), axis=-1)  # (R, R, R, 3), central differences
    features = np.concatenate([np.clip(grid.albedo, 0.0, 1.0), gradient], axis=-1).astype(np.float32)
    # numpy (x, y, z[, c]) "ij" -> torch (c, z, y, x): grid_sample reads (x, y, z) as (W, H, D)
    dens_t = torch.from_numpy(np.ascontiguousarray(density.transpose(2, 1, 0)))[None, None]
    feat_t = torch.from_numpy(np.ascontiguousarray(features.transpose(3, 2, 1, 0)))[None]
    return RenderGrid(density=dens_t, features=feat_t, coarse=coarse_states(density))


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
