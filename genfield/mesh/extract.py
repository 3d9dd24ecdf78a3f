"""From a field to a coloured triangle mesh: refined occupancy grid, marching cubes, colours.

Marching cubes is scikit-image's (Lewiner et al. 2003) at occupancy 0.5 on the refined grid
(``genfield.mesh.refine``), padded by one layer of empty points so that an object touching
the cube's faces still closes. Normals come from the mesh (area-weighted face normals)
rather than the field's gradient on the grid: on a sphere at 128^3 their mean error is 0.53
degrees against 0.95 for scikit-image's grid gradient, and 2.5 against 7.0 for a field as
sharp as a trained one (sigmoid width a quarter cell; measured, the tests bound it). Vertex colours are the appearance field queried at the
vertices, kept linear here; each file format encodes them (``genfield.mesh.export``).
"""

from __future__ import annotations

import logging
import time
from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np
from skimage.measure import marching_cubes

from genfield.mesh.cleanup import keep_large_components
from genfield.mesh.refine import CHUNK, LEVEL, OccupancyFn, OccupancyGrid, refine_occupancy

log = logging.getLogger(__name__)

ColourFn = Callable[[np.ndarray], np.ndarray]  # (N, 3) float32 object frame -> (N, 3) linear RGB


@dataclass(frozen=True)
class Mesh:
    """A triangle mesh in the object frame (or in metres after ``scaled``).

    vertices: (V, 3) float32; faces: (F, 3) int64, counter-clockwise seen from outside;
    normals: (V, 3) float32 unit, outward; colours: (V, 3) float32 linear RGB in [0, 1] or None.
    """

    vertices: np.ndarray
    faces: np.ndarray
    normals: np.ndarray
    colours: np.ndarray | None = None

    def scaled(self, half_extent: float) -> Mesh:
        """The same mesh in metres: the object cube's half-extent becomes ``half_extent``."""
        if not half_extent > 0:
            raise ValueError(f"half_extent must be > 0 metres, got {half_extent}")
        return replace(self, vertices=(self.vertices * np.float32(half_extent)).astype(np.float32))


@dataclass(frozen=True)
class ExtractionStats:
    """What an extraction cost."""

    resolution: int  # cells per axis of the finest grid
    points_evaluated: int  # occupancy queries over all levels
    dense_points: int  # what a dense grid of the same resolution queries
    colour_points: int  # appearance queries (one per kept vertex)
    seconds: float  # wall time of the whole extraction

    @property
    def fraction(self) -> float:
        return self.points_evaluated / self.dense_points


def mesh_from_grid(grid: OccupancyGrid) -> Mesh:
    """Marching cubes on a refined grid; an empty mesh where the grid holds no surface."""
    r = grid.resolution
    values = np.pad(grid.values, 1, mode="constant", constant_values=0.0)  # (R + 3,)^3
    if not (values.max() > LEVEL > values.min()):
        return Mesh(np.zeros((0, 3), np.float32), np.zeros((0, 3), np.int64), np.zeros((0, 3), np.float32))
    h = 2.0 / r
    verts, faces, _, _ = marching_cubes(values, level=LEVEL, spacing=(h, h, h))
    verts = verts - (1.0 + h)  # padded index 1 is the grid point at -1
    # scikit-image winds the triangles clockwise seen from outside for an x-first ("ij")
    # volume (measured: negative trimesh volume on a sphere); reversing makes them counter-clockwise, the glTF/OBJ/PLY and trimesh convention
    # (a closed mesh then has positive trimesh volume, which the tests check).
    faces = np.ascontiguousarray(faces[:, ::-1], dtype=np.int64)
    verts = verts.astype(np.float32)
    return Mesh(verts, faces, vertex_normals(verts, faces))


def vertex_normals(vertices: np.ndarray, faces: np.ndarray) -> np.ndarray:
    """(V, 3) float32 unit outward normals of a mesh whose faces wind counter-clockwise.

    The sum of the unnormalised face normals (cross products) around each vertex: face
    normals weighted by area, the common practice (Max 1999 compares the usual weightings).
    """
    v = vertices.astype(np.float64)
    cross = np.cross(v[faces[:, 1]] - v[faces[:, 0]], v[faces[:, 2]] - v[faces[:, 0]])  # (F, 3)
    corner = faces.reshape(-1)  # (3F,): each face's normal goes to its three vertices
    normals = np.stack([np.bincount(corner, weights=np.repeat(cross[:, c], 3), minlength=len(v))
                        for c in range(3)], axis=1)  # (V, 3)
    length = np.linalg.norm(normals, axis=1, keepdims=True)
    return (normals / np.where(length > 0, length, 1.0)).astype(np.float32)


def extract_mesh(
    occupancy_fn: OccupancyFn,
    colour_fn: ColourFn | None = None,
    *,
    resolution: int = 128,
    coarse: int = 32,
    min_component_fraction: float = 0.0,
    chunk: int = CHUNK,
    progress: bool = False,
) -> tuple[Mesh, ExtractionStats]:
    """The 0.5-isosurface of ``occupancy_fn`` over [-1, 1]^3, coloured by ``colour_fn``.

    Args:
        occupancy_fn: (N, 3) float32 object-frame points -> (N,) occupancy in [0, 1].
        colour_fn: (N, 3) points -> (N, 3) linear RGB, queried at the vertices; None for none.
        resolution: cells per axis of the finest grid, ``coarse * 2^k``.
        coarse: cells per axis of the first grid; a detached part is found when it crosses
            one of its edges (``genfield.mesh.refine``).
        min_component_fraction: drop pieces enclosing less than this fraction of the total
            volume (0 keeps everything).
        chunk: points per field call.
        progress: progress bar on stderr.
    """
    if not 0.0 <= min_component_fraction < 1.0:
        raise ValueError(f"min_component_fraction must be in [0, 1), got {min_component_fraction}")
    start = time.perf_counter()
    grid = refine_occupancy(occupancy_fn, resolution, coarse, chunk=chunk, progress=progress)
    mesh = mesh_from_grid(grid)
    if min_component_fraction > 0 and len(mesh.faces):
        keep_v, keep_f = keep_large_components(mesh.vertices, mesh.faces, min_component_fraction)
        remap = np.cumsum(keep_v) - 1
        mesh = Mesh(mesh.vertices[keep_v], remap[mesh.faces[keep_f]], mesh.normals[keep_v])
    colour_points = 0
    if colour_fn is not None and len(mesh.vertices):
        mesh = replace(mesh, colours=_colours(colour_fn, mesh.vertices, chunk))
        colour_points = len(mesh.vertices)
    stats = ExtractionStats(resolution, grid.points_evaluated, grid.dense_points, colour_points,
                            time.perf_counter() - start)
    log.info("mesh: %d vertices, %d faces; %d of %d grid points evaluated (%.1f%%) in %.2f s",
             len(mesh.vertices), len(mesh.faces), stats.points_evaluated, stats.dense_points,
             100 * stats.fraction, stats.seconds)
    return mesh, stats


def _colours(colour_fn: ColourFn, points: np.ndarray, chunk: int) -> np.ndarray:
    """(V, 3) float32 linear RGB clipped to [0, 1], queried in chunks."""
    out = np.empty((len(points), 3), dtype=np.float32)
    for start in range(0, len(points), chunk):
        part = points[start : start + chunk]
        rgb = np.asarray(colour_fn(part), dtype=np.float32)
        if rgb.shape != (len(part), 3):
            raise ValueError(f"colour function returned shape {rgb.shape} for {len(part)} points")
        out[start : start + chunk] = rgb
    return np.clip(out, 0.0, 1.0)
