"""Marching rays through objects' grids at shared steps, skipping empty and hidden space.

Every ray r gets one step length ``delta[r]`` (``step`` cells of the finest object it meets)
and its samples sit at t = j * delta[r] for integers j, whatever the object: samples of
different objects on one ray meet at the same j, so merging them needs no sort by distance
and no resampling. Per object and ray:

1. the ray enters the object frame (x_obj = A x + b with A = R^T / s, the inverse pose), so
   t stays the world distance, and is clipped to the cube [-1, 1]^3 (slab method, Kay and
   Kajiya 1986);
2. coarse steps of f = floor(h / delta) fine steps (h the coarse cell in metres) are judged
   at their first point in the coarse occupancy grid (``genfield.render.grids``): the run
   spans (f - 1) delta < h, so every point of it lies in that point's coarse cell or a
   neighbour, and the grid is dilated by one cell: an unoccupied verdict is exact;
3. each remaining fine step is judged by its fine cell: empty cells have no density, full
   ones exactly SIGMA_MAX, and only mixed ones are sampled (trilinear, ``grids.reconstruct``);
4. at the first point (coarse or fine) in a deep cell the object's contribution on that ray
   ends after the run of steps the deep cell guarantees opaque (optical depth >= TAU_DEEP):
   nothing behind it can show, neither in the composite nor in the object's amodal mask.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from genfield.field.grid import SIGMA_MAX
from genfield.render.grids import DEEP, EMPTY, MIXED, RenderGrid, reconstruct, sample
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


def _first_per_owner(owner: np.ndarray, flagged: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Positions and owners of the first flagged entry of each owner (owner sorted)."""
    at = np.flatnonzero(flagged)
    if len(at) == 0:
        return at, at
    o = owner.take(at)
    new = np.empty(len(o), bool)
    new[0], new[1:] = True, o[1:] != o[:-1]
    lead = at.compress(new)
    return lead, owner.take(lead)


def _cell_index(points: np.ndarray, cells: int, inv_size: float) -> np.ndarray:
    """Flat ``indexing="ij"`` index of the cell (of ``cells`` a side) holding each point (3, n)."""
    u = points + np.float32(1.0)
    u *= np.float32(inv_size)
    np.clip(u, 0.0, cells - 1, out=u)  # points on or beyond a face belong to its cells
    c = u.astype(np.int32)
    return (c[0] * cells + c[1]) * cells + c[2]


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
    fine_cells = grid.resolution - 1
    # steps of opaque matter a deep cell guarantees ahead, and steps a coarse step may span
    deep = np.floor(grid.deep_cells * grid.cell * placed.scale / dl).astype(np.int64)  # (m,)
    f = np.floor(grid.coarse_cell * placed.scale / dl).astype(np.int64)  # (m,), (f - 1) delta < h

    # 1. coarse steps: skip unoccupied ones, stop after the first that starts in a deep cell
    c0 = j0 // f
    counts = np.where(j1 >= j0, j1 // f - c0 + 1, 0)
    pair, offset = _ragged_arange(counts)
    jc = (c0.take(pair) + offset) * f.take(pair)  # (q,) first fine step of each coarse step
    p = _points(o3, d3, pair, jc * dl.take(pair))  # (3, q)
    coarse = grid.coarse.shape[0]
    occupied = np.flatnonzero(grid.coarse.ravel().take(_cell_index(p, coarse, 1.0 / grid.coarse_cell)))
    pair, jc, p = pair.take(occupied), jc.take(occupied), p.take(occupied, axis=1)
    last = j1.copy()  # (m,) the last fine step that can matter
    state = grid.fine.take(_cell_index(p, fine_cells, 1.0 / grid.cell))
    lead, owners = _first_per_owner(pair, state == DEEP)
    last[owners] = np.minimum(last.take(owners), jc.take(lead) + deep.take(owners))
    keep = np.flatnonzero(jc <= last.take(pair))
    pair, jc = pair.take(keep), jc.take(keep)

    # 2. fine steps of those coarse steps, judged by their cell: empty ones go, full ones are
    # SIGMA_MAX, the first deep one ends the object on that ray; only mixed ones are sampled
    first = np.maximum(jc, j0.take(pair))  # the fine steps of each coarse step inside the cube
    count = np.maximum(np.minimum(jc + f.take(pair) - 1, last.take(pair)) - first + 1, 0)
    owner, fine = _ragged_arange(count)
    fpair = pair.take(owner)
    fj = first.take(owner) + fine  # (n,) fine steps
    pts = _points(o3, d3, fpair, fj * dl.take(fpair))  # (3, n)
    state = grid.fine.take(_cell_index(pts, fine_cells, 1.0 / grid.cell))
    lead, owners = _first_per_owner(fpair, state == DEEP)
    last[owners] = np.minimum(last.take(owners), fj.take(lead) + deep.take(owners))
    keep = np.flatnonzero((state != EMPTY) & (fj <= last.take(fpair)))
    fpair, fj, pts, state = fpair.take(keep), fj.take(keep), pts.take(keep, axis=1), state.take(keep)
    sigma = np.full(len(fj), SIGMA_MAX, np.float32)  # per object unit
    mixed = np.flatnonzero(state == MIXED)
    sigma[mixed] = reconstruct(sample(grid.density, pts.take(mixed, axis=1))[:, 0])
    sigma /= placed.scale  # per metre
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
