"""Generative quality of prior samples against held-out shapes: Coverage, MMD and 1-NNA.

With a generated set S_g and a reference set S_r of point clouds and a distance D
(Chamfer-L1 here, ``genfield.mesh.quality.chamfer_distance``):

    COV(S_g, S_r) = |{ argmin_{Y in S_r} D(X, Y) : X in S_g }| / |S_r|
    MMD(S_g, S_r) = 1/|S_r| sum_{Y in S_r} min_{X in S_g} D(X, Y)
        (Achlioptas et al. 2018, "Learning representations and generative models for 3D point
        clouds", section 4, with CD as the distance)
    1-NNA = accuracy of the leave-one-out 1-nearest-neighbour classifier telling S_g from S_r
        in S_g u S_r; 50% when the two sets are alike, 100% when they are far apart
        (Yang et al. 2019, "PointFlow", section 5.2).

Coverage is in [0, 1], higher better; MMD in object units, lower better.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from genfield.mesh.quality import chamfer_distance


@dataclass(frozen=True)
class GenerativeScores:
    coverage: float  # fraction of references that are some sample's nearest reference
    mmd: float  # mean over references of the distance to the nearest sample
    nna: float  # 1-NN two-sample accuracy, ideal 0.5


def distance_matrix(a: list[np.ndarray], b: list[np.ndarray] | None = None) -> np.ndarray:
    """(len(a), len(b)) Chamfer distances between point clouds (n_i, 3); ``b=None``: a with
    itself (symmetric, each pair computed once, zero diagonal)."""
    if b is not None:
        return np.array([[chamfer_distance(x, y) for y in b] for x in a], dtype=np.float64)
    out = np.zeros((len(a), len(a)))
    for i in range(len(a)):
        for j in range(i + 1, len(a)):
            out[i, j] = out[j, i] = chamfer_distance(a[i], a[j])
    return out


def scores_from_distances(gen_ref: np.ndarray, gen_gen: np.ndarray,
                          ref_ref: np.ndarray) -> GenerativeScores:
    """COV, MMD, 1-NNA from the three distance matrices (g, r), (g, g), (r, r)."""
    g, r = gen_ref.shape
    coverage = len(set(np.argmin(gen_ref, axis=1).tolist())) / r
    mmd = float(gen_ref.min(axis=0).mean())
    full = np.block([[gen_gen, gen_ref], [gen_ref.T, ref_ref]])  # (g + r, g + r)
    np.fill_diagonal(full, np.inf)  # leave one out
    nearest = np.argmin(full, axis=1)
    is_gen = np.arange(g + r) < g
    correct = is_gen == is_gen[nearest]
    return GenerativeScores(coverage=float(coverage), mmd=mmd, nna=float(correct.mean()))


def generative_scores(generated: list[np.ndarray], reference: list[np.ndarray]) -> GenerativeScores:
    """COV, MMD and 1-NNA of generated point clouds against reference point clouds."""
    if not generated or not reference:
        raise ValueError("need at least one generated and one reference cloud")
    return scores_from_distances(distance_matrix(generated, reference),
                                 distance_matrix(generated), distance_matrix(reference))
