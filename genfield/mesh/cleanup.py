"""Removing small floating pieces from a mesh: prior samples of a learned field carry floaters.

A piece is a connected component of the triangle graph (triangles sharing a vertex). Its
enclosed volume comes from the divergence theorem over its triangles,
V = 1/6 sum_f v0 . (v1 x v2) (the signed-tetrahedron formula; trimesh's ``volume`` computes
the same for a closed mesh); marching cubes on a padded grid gives closed pieces, so the
volume is that of the solid the piece bounds.
"""

from __future__ import annotations

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components


def component_labels(faces: np.ndarray, n_vertices: int) -> tuple[int, np.ndarray]:
    """Connected components of a triangle mesh: (count, (V,) int label of each vertex)."""
    rows = np.concatenate([faces[:, 0], faces[:, 1], faces[:, 2]])
    cols = np.concatenate([faces[:, 1], faces[:, 2], faces[:, 0]])
    graph = coo_matrix((np.ones(len(rows), dtype=np.int8), (rows, cols)), shape=(n_vertices,) * 2)
    count, labels = connected_components(graph, directed=False)
    return int(count), labels


def component_volumes(vertices: np.ndarray, faces: np.ndarray, labels: np.ndarray,
                      count: int) -> np.ndarray:
    """(count,) enclosed volume of each component (signed tetrahedra, see the module doc)."""
    v = vertices.astype(np.float64)
    tri = v[faces]  # (F, 3 corners, 3)
    signed = np.einsum("fi,fi->f", tri[:, 0], np.cross(tri[:, 1], tri[:, 2])) / 6.0  # (F,)
    return np.bincount(labels[faces[:, 0]], weights=signed, minlength=count)


def keep_large_components(vertices: np.ndarray, faces: np.ndarray,
                          min_fraction: float) -> tuple[np.ndarray, np.ndarray]:
    """Masks (V,) and (F,) bool of the pieces whose volume is at least ``min_fraction`` of the
    whole mesh's volume; the largest piece is always kept."""
    if not 0.0 <= min_fraction < 1.0:
        raise ValueError(f"min_fraction must be in [0, 1), got {min_fraction}")
    count, labels = component_labels(faces, len(vertices))
    volumes = np.abs(component_volumes(vertices, faces, labels, count))
    keep = volumes >= min_fraction * volumes.sum()
    keep[int(np.argmax(volumes))] = True
    return keep[labels], keep[labels[faces[:, 0]]]
