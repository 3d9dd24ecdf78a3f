"""Marching rays through objects' grids at shared steps, skipping empty and hidden space.

Every ray r gets one step length ``delta[r]`` (``step`` cells of the finest object it meets)
and its samples sit at t = j * delta[r] for integers j, whatever the object: samples of
different objects on one ray meet at the same j, so merging them needs no sort by distance
and no resampling. Per object and ray:

1. the ray enters the object frame (x_obj = A x + b with A = R^T / s, the inverse pose), so
   t stays the world distance, and is clipped to the cube [-1, 1]^3 (slab method, Kay and
   Kajiya 1986);
2. coarse steps of f = floor(h / delta) fine steps (h the coarse cell in metres) are judged
   at their first point in the coarse state grid (``genfield.render.grids``): the run spans
   (f - 1) delta < h, every point of it lies in that point's coarse cell or a neighbour,
   and the state grid is dilated by one cell, so an empty verdict is exact;
3. from the first coarse step that starts in a solid cell the object contributes only the
   f + 1 fine steps that the solid cell guarantees opaque (all within h of a point whose
   26 neighbour cells are solid: optical depth >= SIGMA_MAX (f + 1) delta / s, at least
   28 for every ladder grid), and nothing behind it;
4. the density volume is sampled at the remaining fine steps (``grids.reconstruct``);
   steps of zero density go.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from genfield.render.grids import EMPTY, SOLID, RenderGrid, reconstruct, sample
from genfield.scene import Pose


@dataclass(frozen=True)
class Placed:
    """An object as the marcher sees it: its prepared grid and its pose as arrays.

    to_object: (3, 4) x_obj = A x + b with A = R^T / s (Pose.world_to_object);
    rotation: (3, 3) R; scale: s in metres.
    """

    grid: RenderGrid
    to_object: np.ndarray
    rotation: np.ndarray
    scale: float

    @classmethod
    def make(cls, grid: RenderGrid, pose: Pose) -> Placed:
        return cls(grid, pose.world_to_object()[:3], pose.R, float(pose.scale))

    @property
    def world_cell(self) -> float:
        """One grid cell in metres."""
        return self.scale * self.grid.cell


@dataclass(frozen=True)
class Samples:
    """One object's samples of positive density, ordered by ray, then by step.

    ray: (n,) int64 ray index; step: (n,) int64 shared step j (t = j * delta[ray]);
    points: (3, n) float32 object frame, one row per axis; sigma: (n,) float32 density per metre.
    """

    ray: np.ndarray
    step: np.ndarray
    points: np.ndarray
    sigma: np.ndarray


def box_interval(placed: Placed, origins: np.ndarray,
                 directions: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """World distances (t0, t1), each (N,), where rays (3, N) cross the object's cube; t0 >= 0.

    A ray misses where t1 <= t0. Slab method: t0 = max over axes of the entering distance,
    t1 = min of the leaving one (Kay and Kajiya 1986; Williams et al. 2005 for the
    treatment of zero direction components, here replaced by a tiny one).
    """
    m = placed.to_object
    o = m[:3, :3] @ origins + m[:3, 3:]  # (3, N) object frame
    d = m[:3, :3] @ directions  # (3, N), |d| = 1 / s
    inv = 1.0 / np.where(np.abs(d) < 1e-15, 1e-15, d)
    lo = (-1.0 - o) * inv  # (3, N)
    hi = (1.0 - o) * inv
    near, far = np.minimum(lo, hi), np.maximum(lo, hi)
    t0 = np.maximum(np.maximum(near[0], near[1]), np.maximum(near[2], 0.0))
    t1 = np.minimum(np.minimum(far[0], far[1]), far[2])
    return t0, t1


def ray_steps(placed: list[Placed], hits: list[np.ndarray], n: int, step: float) -> np.ndarray:
    """(n,) step length per ray: ``step`` world cells of the finest object it meets (inf: none)."""
    delta = np.full(n, np.inf)
    for p, hit in zip(placed, hits, strict=True):
        delta[hit] = np.minimum(delta[hit], step * p.world_cell)
    return delta


def _ragged_arange(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(owner, offset) for runs 0..counts[i]-1 laid end to end: both (sum(counts),) int64."""
    owner = np.repeat(np.arange(len(counts)), counts)
    starts = np.cumsum(counts) - counts  # (m,)
    offset = np.arange(len(owner)) - starts.take(owner)
    return owner, offset


def _points(o3: np.ndarray, d3: np.ndarray, pair: np.ndarray, t: np.ndarray) -> np.ndarray:
    """(3, n) float32 points o + t d of rays ``pair``; o3, d3 are (3, m) float32.

    Columns are gathered with ``take`` along axis 1: on this CPU it is ~15x faster than
    fancy-indexing rows of an (m, 3) array (measured, numpy 2.4).
    """
    return o3.take(pair, axis=1) + t.astype(np.float32) * d3.take(pair, axis=1)


def march_object(placed: Placed, ray_ids: np.ndarray, origins: np.ndarray, directions: np.ndarray,
                 t0: np.ndarray, t1: np.ndarray, delta: np.ndarray) -> Samples:
    """Samples of one object along the rays ``ray_ids`` (sorted), at the shared steps.

    origins, directions: (3, N) world, float64, of all rays; t0, t1: (m,) the cube interval
    of the chosen rays, t1 already clipped to anything opaque in front (the floor);
    delta: (N,) step lengths of all rays.
    """
    grid = placed.grid
    m = placed.to_object
    o3 = (m[:3, :3] @ origins.take(ray_ids, axis=1) + m[:3, 3:]).astype(np.float32)  # (3, m) object frame
    d3 = (m[:3, :3] @ directions.take(ray_ids, axis=1)).astype(np.float32)  # (3, m), |d| = 1 / s
    dl = delta[ray_ids]  # (m,) float64
    j0 = np.ceil(t0 / dl).astype(np.int64)
    j1 = np.floor(t1 / dl).astype(np.int64)
    # a coarse step of f fine steps spans (f - 1) delta < one coarse cell (module doc, 2.)
    f = np.floor(grid.coarse_cell * placed.scale / dl).astype(np.int64)  # (m,) steps a cell
    c0 = j0 // f
    counts = np.where(j1 >= j0, j1 // f - c0 + 1, 0)  # coarse steps per ray
    pair, offset = _ragged_arange(counts)
    jc = (c0.take(pair) + offset) * f.take(pair)  # (q,) first fine step of each coarse step
    p = _points(o3, d3, pair, jc * dl.take(pair))  # (3, q)
    cells = grid.coarse.shape[0]
    cell = ((np.clip(p, -1.0, 1.0) + 1.0) * (1.0 / grid.coarse_cell)).astype(np.int64)
    np.minimum(cell, cells - 1, out=cell)
    state = grid.coarse.ravel().take((cell[0] * cells + cell[1]) * cells + cell[2])  # (q,)

    # hidden space: after the first solid coarse step only the run it guarantees opaque
    last = j1.copy()  # (m,) last fine step that can matter
    solid = np.flatnonzero(state == SOLID)
    if len(solid):
        sp = pair.take(solid)
        lead = solid.compress(np.r_[True, sp[1:] != sp[:-1]])
        owners = pair.take(lead)
        last[owners] = np.minimum(last.take(owners), jc.take(lead) + f.take(owners))
    active = np.flatnonzero((state != EMPTY) & (jc <= last.take(pair)))

    apair = pair.take(active)
    owner, fine = _ragged_arange(f.take(apair))
    fpair = apair.take(owner)
    fj = jc.take(active).take(owner) + fine  # (n,) fine steps
    inside = np.flatnonzero((fj >= j0.take(fpair)) & (fj <= last.take(fpair)))
    fpair, fj = fpair.take(inside), fj.take(inside)
    pts = _points(o3, d3, fpair, fj * dl.take(fpair))  # (3, n)
    sigma = reconstruct(sample(grid.density, pts)[:, 0]) / placed.scale  # per object unit -> per metre
    keep = np.flatnonzero(sigma > 0.0)
    return Samples(ray=ray_ids.take(fpair.take(keep)), step=fj.take(keep),
                   points=pts.take(keep, axis=1), sigma=sigma.take(keep))


def march_all(placed: list[Placed], origins: np.ndarray, directions: np.ndarray, t_max: np.ndarray,
              step: float, intervals: list[tuple[np.ndarray, np.ndarray]] | None = None,
              ) -> tuple[list[Samples], np.ndarray]:
    """Every object's samples along rays (3, N), and the rays' step lengths (N,) (inf: no object).

    t_max: (N,) distance of an opaque surface ahead (inf: none); no sample lies past it.
    intervals: each object's ``box_interval`` of these rays, if already known.
    """
    n = origins.shape[1]
    if intervals is None:
        intervals = [box_interval(p, origins, directions) for p in placed]
    hits = [(t1 > t0) & (t0 < t_max) for t0, t1 in intervals]
    delta = ray_steps(placed, hits, n, step)
    samples = []
    for p, (t0, t1), hit in zip(placed, intervals, hits, strict=True):
        ids = np.flatnonzero(hit)
        samples.append(march_object(p, ids, origins, directions, t0.take(ids),
                                    np.minimum(t1.take(ids), t_max.take(ids)), delta))
    return samples, delta


def transmittance(placed: list[Placed], origins: np.ndarray, directions: np.ndarray,
                  step: float) -> np.ndarray:
    """(N,) transmittance exp(-sum sigma delta) of all objects along rays (3, N) (Beer-Lambert).

    Only the total optical depth matters here, so the objects' samples need no merging.
    """
    n = origins.shape[1]
    samples, delta = march_all(placed, origins, directions, np.full(n, np.inf), step)
    tau = np.zeros(n)
    for s in samples:
        tau += np.bincount(s.ray, s.sigma * delta.take(s.ray), minlength=n)
    return np.exp(-tau)
