"""Coarse-to-fine occupancy grids: evaluate a field densely only where its surface is.

This is the multiresolution isosurface extraction of Occupancy Networks (Mescheder et al.,
CVPR 2019, section 3.3, "MISE"): evaluate the field on a coarse grid, mark the cells whose
corners disagree about inside/outside (occupancy above or below 0.5), subdivide only those
cells, and repeat until the target resolution. Points never evaluated take the trilinear
interpolation of the coarser level, which lies on the same side of 0.5 as the corners it
comes from, so marching cubes finds no surface there.

Two changes to the published procedure, both measured to give the same grid with fewer
field queries:
- Subdivision is lazy. After upsampling, a level is *traced*: every cell that shows a sign
  change (in evaluated or interpolated values) and still has interpolated corners gets them
  evaluated, until no such cell is left. Inside a marked parent only the children the
  surface passes through are evaluated, not all eight.
- MISE also subdivides every neighbour of a marked cell "to be safe"; tracing refines a
  neighbour exactly when the surface crosses into it through a shared face, and so follows
  a surface component across the whole level once one cell of it is marked.
At 128^3 from a 32^3 coarse grid this evaluates 8.0% of the dense grid's points on a
thin-walled cup against 19.0% for MISE with neighbours (sphere: 4.5% against 11.4%; measured
during development), both grids equal to the dense one; the tests pin the equality.

When is the result exact? Every final-level cell that shows a sign change has all eight
corners evaluated, so its triangles are the dense grid's. A surface component is found when
it crosses an edge of the coarse grid; in particular any part containing a ball of radius
sqrt(3) / 2 times the coarse spacing holds a coarse grid point and is found. A component
(or a detached thin part) that falls entirely between the coarse grid's points is missed:
choose the coarse resolution finer than the thinnest separate part.

Grid layout (as ``genfield/field/grid.py``): ``values[i, j, k]`` is the occupancy at
``(-1 + 2 i / R, -1 + 2 j / R, -1 + 2 k / R)``, ``indexing="ij"``, R cells, R + 1 points.
"""

from __future__ import annotations

import logging
import sys
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from tqdm import tqdm

log = logging.getLogger(__name__)

OccupancyFn = Callable[[np.ndarray], np.ndarray]  # (N, 3) float32 object frame -> (N,) in [0, 1]
LEVEL = 0.5  # the surface: occupancy 0.5
CHUNK = 65536  # points per field call: bounds the memory a query takes


@dataclass(frozen=True)
class OccupancyGrid:
    """A (possibly refined) occupancy grid over the object cube [-1, 1]^3.

    values: (R + 1, R + 1, R + 1) float32 occupancy, evaluated or interpolated.
    evaluated: (R + 1, R + 1, R + 1) bool, where the field was actually queried.
    points_evaluated: field queries made over all levels (= evaluated.sum(): none is repeated).
    """

    values: np.ndarray
    evaluated: np.ndarray
    points_evaluated: int

    @property
    def resolution(self) -> int:
        """Cells per axis."""
        return int(self.values.shape[0]) - 1

    @property
    def dense_points(self) -> int:
        """How many points a dense grid of the same resolution evaluates."""
        return int(self.values.size)

    @property
    def inside(self) -> np.ndarray:
        """(R + 1,)^3 bool: occupancy above the 0.5 level."""
        return self.values > LEVEL


def grid_coordinates(index: np.ndarray, resolution: int) -> np.ndarray:
    """Integer grid indices (N, 3) to object-frame points (N, 3) float32."""
    return (-1.0 + index.astype(np.float64) * (2.0 / resolution)).astype(np.float32)


def evaluate(fn: OccupancyFn, points: np.ndarray, chunk: int = CHUNK,
             bar: tqdm | None = None) -> np.ndarray:
    """``fn`` over (N, 3) float32 points in chunks of ``chunk``; returns (N,) float32."""
    out = np.empty(len(points), dtype=np.float32)
    for start in range(0, len(points), chunk):
        part = points[start : start + chunk]
        values = np.asarray(fn(part), dtype=np.float32).reshape(-1)
        if values.shape[0] != part.shape[0]:
            raise ValueError(f"occupancy function returned {values.shape[0]} values for {len(part)} points")
        out[start : start + chunk] = values
        if bar is not None:
            bar.update(len(part))
    return out


def _along(axis: int, part: slice) -> tuple[slice, ...]:
    """The index taking ``part`` along ``axis`` of a 3-D array and everything else."""
    index = [slice(None)] * 3
    index[axis] = part
    return tuple(index)


def _upsample(values: np.ndarray) -> np.ndarray:
    """Trilinear upsampling of an (n + 1)^3 point grid to (2n + 1)^3, exact at shared points:
    linear along each axis in turn, new points the mean of their two neighbours."""
    for axis in range(3):
        shape = list(values.shape)
        shape[axis] = 2 * shape[axis] - 1
        out = np.empty(shape, dtype=values.dtype)
        out[_along(axis, slice(0, None, 2))] = values
        mid = out[_along(axis, slice(1, None, 2))]
        np.add(values[_along(axis, slice(0, -1))], values[_along(axis, slice(1, None))], out=mid)
        mid *= 0.5
        values = out
    return values


def _cells_reduce(points: np.ndarray, op: Callable[[np.ndarray, np.ndarray], np.ndarray]) -> np.ndarray:
    """(n + 1)^3 point mask to (n)^3 cell mask, combining each cell's 8 corners with ``op``."""
    out = points
    for axis in range(3):
        out = op(out[_along(axis, slice(0, -1))], out[_along(axis, slice(1, None))])
    return out


def sign_change_cells(inside: np.ndarray) -> np.ndarray:
    """(n + 1)^3 bool inside mask to (n)^3 bool: cells whose corners disagree."""
    return _cells_reduce(inside, np.logical_or) & ~_cells_reduce(inside, np.logical_and)


def corners_of(cells: np.ndarray) -> np.ndarray:
    """(n)^3 cell mask to the (n + 1)^3 point mask of the marked cells' corners."""
    out = cells
    for axis in range(3):
        # point p is a corner of cells p - 1 and p (where they exist)
        before = np.concatenate([out[_along(axis, slice(0, 1))], out], axis=axis)
        after = np.concatenate([out, out[_along(axis, slice(-1, None))]], axis=axis)
        out = before | after
    return out


def refine_occupancy(fn: OccupancyFn, resolution: int, coarse: int = 32, *, chunk: int = CHUNK,
                     progress: bool = False) -> OccupancyGrid:
    """The occupancy grid of ``fn`` at ``resolution`` cells per axis, evaluated coarse to fine.

    Args:
        fn: occupancy of (N, 3) float32 object-frame points, (N,) values in [0, 1].
        resolution: target cells per axis; must be ``coarse * 2^k``.
        coarse: cells per axis of the first, fully evaluated grid. ``coarse == resolution``
            is the dense grid (every point evaluated), the baseline the refined grid equals.
        chunk: points per call of ``fn``.
        progress: show a progress bar of evaluated points on stderr.
    """
    if coarse < 1 or resolution < coarse:
        raise ValueError(f"need 1 <= coarse <= resolution, got coarse={coarse}, resolution={resolution}")
    levels = 0
    while coarse << levels < resolution:
        levels += 1
    if coarse << levels != resolution:
        raise ValueError(f"resolution {resolution} is not coarse {coarse} times a power of two")

    bar = tqdm(desc="field points", unit="pt", unit_scale=True,
               file=sys.stderr, disable=not progress, leave=False)
    n = coarse
    index = np.indices((n + 1,) * 3).reshape(3, -1).T  # (P, 3) ij order
    values = evaluate(fn, grid_coordinates(index, n), chunk, bar).reshape((n + 1,) * 3)
    evaluated = np.ones_like(values, dtype=bool)
    count = values.size
    for level in range(levels + 1):
        if level > 0:  # subdivide: the marked cells' children start as interpolation
            values = _upsample(values)
            n *= 2
            grown = np.zeros_like(values, dtype=bool)
            grown[::2, ::2, ::2] = evaluated
            evaluated = grown
        while True:  # trace: evaluate the corners of every cell the surface passes through
            added = _fill(fn, values, evaluated, corners_of(sign_change_cells(values > LEVEL)),
                          n, chunk, bar)
            if added == 0:
                break
            count += added
        log.debug("level %d: %d cells per axis, %d points evaluated so far", level, n, count)
    bar.close()
    return OccupancyGrid(values=values, evaluated=evaluated, points_evaluated=int(count))


def _fill(fn: OccupancyFn, values: np.ndarray, evaluated: np.ndarray, need: np.ndarray, n: int,
          chunk: int, bar: tqdm) -> int:
    """Evaluate ``fn`` where ``need & ~evaluated``, in place; returns how many points."""
    todo = need & ~evaluated
    flat = np.flatnonzero(todo)  # C order, as boolean indexing of ``values`` below
    if len(flat) == 0:
        return 0
    index = np.stack(np.unravel_index(flat, todo.shape), axis=1)  # (P, 3)
    values[todo] = evaluate(fn, grid_coordinates(index, n), chunk, bar)
    evaluated |= todo
    return len(flat)


def dense_occupancy(fn: OccupancyFn, resolution: int, *, chunk: int = CHUNK,
                    progress: bool = False) -> OccupancyGrid:
    """Every point of the grid evaluated: the reference the refined grid is tested against."""
    return refine_occupancy(fn, resolution, coarse=resolution, chunk=chunk, progress=progress)
