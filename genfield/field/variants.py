"""New variants from the prior: how many are valid shapes, and how they compare with unseen
assets of the trained families (Coverage, MMD, 1-NNA; ``genfield.field.genmetrics``).

Both sides of the comparison go through the same path, so grid resolution biases neither:
an occupancy grid (the field's bake after cleanup, or the source's exact inside test on the
same grid points), marching cubes (``genfield.mesh.extract.mesh_from_grid``) and points
uniform by area on that mesh (``genfield.mesh.quality.sample_surface``).
"""

from __future__ import annotations

from collections import Counter

import numpy as np

from genfield.field.bake import clean_occupancy
from genfield.field.evaluate import truth_grid
from genfield.field.genmetrics import generative_scores
from genfield.field.grid import SIGMA_MAX
from genfield.field.prior import validity
from genfield.mesh.extract import mesh_from_grid
from genfield.mesh.quality import sample_surface
from genfield.mesh.refine import OccupancyGrid
from genfield.seeds import rng

GRID = 65  # points per axis of the grids scored here (64 cells)


def point_cloud(occupancy: np.ndarray, count: int, g: np.random.Generator) -> np.ndarray:
    """(count, 3) points on the 0.5 level of an occupancy grid (R, R, R); an empty grid gives
    the single point at the origin (far from every real shape: it scores as a miss)."""
    grid = OccupancyGrid(values=occupancy.astype(np.float32),
                         evaluated=np.ones(occupancy.shape, bool), points_evaluated=occupancy.size)
    mesh = mesh_from_grid(grid)
    if len(mesh.faces) == 0:
        return np.zeros((1, 3))
    return sample_surface(mesh, count, g)


def prior_draws(model, count: int, temperature: float, seed: int) -> list[tuple[np.ndarray, np.ndarray, int]]:
    """``count`` (shape, appearance, component) draws, from the stream ``rng(seed, 0, "prior-draws")``."""
    g = rng(seed, 0, "prior-draws")
    book = model.codebook
    out = []
    for _ in range(count):
        c = int(g.choice(len(book.prior_weights), p=book.prior_weights))
        s, a = book.sample_prior(g, temperature, component=c)
        out.append((s, a, c))
    return out


def score_prior(model, holdout: list, *, samples: int, temperature: float, seed: int,
                cloud_points: int) -> dict:
    """Valid fraction of prior draws (overall and per component) and, when there are
    held-out assets, Coverage / MMD / 1-NNA against them. JSON-able."""
    draws = prior_draws(model, samples, temperature, seed)
    fraction = model.config.prior.clean_fraction
    components = [p["family"] for p in model.prior_info.get("components", [])]
    valid, per_comp, occupancies = [], Counter(), []
    for shape, appearance, comp in draws:
        grid = model.bake(shape, appearance, GRID, clean=False)
        occ, parts = clean_occupancy(grid.density / SIGMA_MAX, fraction)
        ok = validity(occ, parts).valid
        valid.append(ok)
        per_comp[components[comp] if comp < len(components) else str(comp)] += int(ok)
        occupancies.append(occ)
    counts = Counter(components[c] if c < len(components) else str(c) for _, _, c in draws)
    result: dict = {
        "temperature": temperature,
        "samples": samples,
        "valid_fraction": round(float(np.mean(valid)), 6) if valid else None,
        "valid_per_family": {k: round(per_comp[k] / n, 6) for k, n in sorted(counts.items())},
    }
    if holdout and occupancies:
        g = rng(seed, 0, "prior-clouds")
        n = min(len(holdout), len(occupancies))
        generated = [point_cloud(o, cloud_points, g) for o in occupancies[:n]]
        reference = [point_cloud(truth_grid(a, GRID).astype(np.float32), cloud_points, g)
                     for a in holdout]
        s = generative_scores(generated, reference)
        result["generative"] = {"coverage": round(s.coverage, 6), "mmd_chamfer_l1": round(s.mmd, 6),
                                "nna": round(s.nna, 6), "generated": n, "reference": len(reference)}
    return result
