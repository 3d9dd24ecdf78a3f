"""Inside or outside of an imported mesh, robust to holes: a vote of ray parities.

A point is inside a closed surface exactly when a ray from it crosses the surface an odd
number of times (the Jordan curve theorem in 3D). A mesh with holes, or a ray that grazes an
edge, can get one ray's parity wrong; so each point casts RAYS rays in fixed directions spread
over the sphere, and the majority of their parities decides (the voting of Nooruddin and
Turk 2003, "Simplification and repair of polygonal models using volumetric techniques").
On a watertight mesh the rays agree (up to grazing hits); a hole flips only the rays that pass
through it. The share of points whose rays disagree is reported as the test's own doubt.

Rays are cast by trimesh with Embree (``embreex``), in chunks of CHUNK points so memory stays
bounded whatever the point count.
"""

from __future__ import annotations

import numpy as np

RAYS = 7  # odd, so a vote never ties
CHUNK = 1 << 13  # points per chunk: CHUNK * RAYS rays in flight
MAX_HITS = 64  # crossings counted per ray at most


def directions(count: int = RAYS) -> np.ndarray:
    """Unit vectors (count, 3) on a Fibonacci spiral, tilted off the coordinate axes so that no
    ray runs along the axis-aligned faces common in CAD meshes."""
    i = np.arange(count) + 0.5
    z = 1.0 - 2.0 * i / count
    phi = i * np.pi * (3.0 - np.sqrt(5.0)) + 0.3
    d = np.stack([np.sqrt(1 - z * z) * np.cos(phi), np.sqrt(1 - z * z) * np.sin(phi), z], axis=1)
    return d + 0.0123  # then renormalised: a tilt of under a degree


_DIRS = directions()
_DIRS = _DIRS / np.linalg.norm(_DIRS, axis=1, keepdims=True)


def parity_votes(mesh, points: np.ndarray) -> np.ndarray:
    """Number of the RAYS rays from each point (N, 3) that cross ``mesh`` an odd number of
    times, (N,) int."""
    points = np.asarray(points, dtype=np.float64).reshape(-1, 3)
    votes = np.zeros(len(points), dtype=np.int64)
    for start in range(0, len(points), CHUNK):
        p = points[start:start + CHUNK]
        origins = np.repeat(p, RAYS, axis=0)  # (n * RAYS, 3)
        dirs = np.tile(_DIRS, (len(p), 1))
        _, ray = mesh.ray.intersects_id(origins, dirs, multiple_hits=True, max_hits=MAX_HITS)
        crossings = np.bincount(ray, minlength=len(origins)).reshape(len(p), RAYS)
        votes[start:start + CHUNK] = (crossings % 2).sum(axis=1)
    return votes


def inside(mesh, points: np.ndarray) -> np.ndarray:
    """(N,) bool: the majority of the rays says inside."""
    return parity_votes(mesh, points) > RAYS // 2
