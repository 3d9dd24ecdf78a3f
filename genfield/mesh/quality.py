"""How close an extracted mesh is to a ground-truth surface: the Chamfer distance.

Chamfer-L1 as Occupancy Networks define it (Mescheder et al., CVPR 2019, section 4.1): the
mean of *accuracy* (mean distance from points on the prediction to the nearest point of the
truth) and *completeness* (the other way round), each distance Euclidean, over points sampled
uniformly by area on both surfaces. In the units of the points (object frame: the cube
[-1, 1]^3, so 0.01 is half a percent of the cube's edge).
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable

import numpy as np
from scipy.spatial import cKDTree

from genfield.mesh.extract import Mesh


def sample_surface(mesh: Mesh, count: int, rng: np.random.Generator) -> np.ndarray:
    """(count, 3) float64 points uniform by area on the mesh (a triangle by its area, then a
    uniform point in it by the square-root barycentric rule, Osada et al. 2002, eq. 1)."""
    if len(mesh.faces) == 0:
        raise ValueError("cannot sample an empty mesh")
    tri = mesh.vertices.astype(np.float64)[mesh.faces]  # (F, 3, 3)
    area = 0.5 * np.linalg.norm(np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0]), axis=1)
    face = rng.choice(len(area), size=count, p=area / area.sum())
    r1 = np.sqrt(rng.random(count))[:, None]
    r2 = rng.random(count)[:, None]
    a, b, c = tri[face, 0], tri[face, 1], tri[face, 2]
    return (1.0 - r1) * a + r1 * (1.0 - r2) * b + r1 * r2 * c


def chamfer_distance(predicted: np.ndarray, truth: np.ndarray) -> float:
    """Chamfer-L1 between point sets (P, 3) and (T, 3): (accuracy + completeness) / 2."""
    accuracy = cKDTree(truth).query(predicted)[0].mean()
    completeness = cKDTree(predicted).query(truth)[0].mean()
    return float(0.5 * (accuracy + completeness))


def mesh_chamfer(mesh: Mesh, truth_points: np.ndarray, rng: np.random.Generator,
                 count: int = 100_000) -> float:
    """Chamfer-L1 of ``mesh`` against points (T, 3) sampled on the true surface."""
    return chamfer_distance(sample_surface(mesh, count, rng), np.asarray(truth_points, np.float64))


def chamfer_by_family(items: Iterable[tuple[str, Mesh, np.ndarray]], rng: np.random.Generator,
                      count: int = 100_000) -> dict[str, float]:
    """Mean Chamfer-L1 per family over (family, mesh, true surface points (T, 3)) triples."""
    scores: dict[str, list[float]] = defaultdict(list)
    for family, mesh, truth in items:
        scores[family].append(mesh_chamfer(mesh, truth, rng, count))
    return {family: float(np.mean(values)) for family, values in scores.items()}
