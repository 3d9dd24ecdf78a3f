"""Figures of a trained field against its training sources' ground truth.

- Volumetric IoU at R^3 (Occupancy Networks, Mescheder et al. 2019, section 4: |A n B| / |A u B|
  of the inside sets) between the baked field as the renderer gets it (occupancy > 0.5 after cleanup) and the source's
  exact occupancy on the same grid points (``genfield.field.grid.grid_points``).
- Colour L1: mean absolute difference of linear albedo at held-out surface samples, over
  points and channels.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass

import numpy as np

from genfield.field.grid import SIGMA_MAX, grid_points


def iou(a: np.ndarray, b: np.ndarray) -> float:
    """IoU of two boolean arrays; 1.0 when both are empty."""
    union = np.logical_or(a, b).sum()
    return float(np.logical_and(a, b).sum() / union) if union else 1.0


def truth_grid(asset, resolution: int) -> np.ndarray:
    """(R, R, R) bool: the source's exact inside set on the grid points."""
    pts = grid_points(resolution).reshape(-1, 3).astype(np.float32)
    return (np.asarray(asset.occupancy(pts)) > 0.5).reshape((resolution,) * 3)


@dataclass(frozen=True)
class AssetScore:
    name: str
    family: str
    iou: float
    colour_l1: float


def score_asset(model, row: int, asset, truth, resolution: int, surface_count: int) -> AssetScore:
    """IoU and colour L1 of code row ``row`` against ``asset`` and its held-out ``truth``."""
    shape, appearance = model.codebook.shape[row], model.codebook.appearance[row]
    grid = model.bake(shape, appearance, resolution)
    inside = grid.density > 0.5 * SIGMA_MAX
    v = iou(inside, truth_grid(asset, resolution))
    pts = truth.surface_points[:surface_count]
    _, albedo = model.query(pts, shape, appearance)
    l1 = float(np.abs(albedo - truth.surface_colour[:surface_count]).mean())
    return AssetScore(asset.name, asset.family, v, l1)


def summarise(scores: list[AssetScore]) -> dict:
    """Mean and worst IoU, mean colour L1, overall and per family (JSON-able, rounded)."""
    def block(group: list[AssetScore]) -> dict:
        worst = min(group, key=lambda s: s.iou)
        return {"iou_mean": _r(np.mean([s.iou for s in group])), "iou_worst": _r(worst.iou),
                "iou_worst_asset": worst.name,
                "colour_l1_mean": _r(np.mean([s.colour_l1 for s in group])),
                "assets": len(group)}

    families: dict[str, list[AssetScore]] = defaultdict(list)
    for s in scores:
        families[s.family].append(s)
    return {**block(scores), "per_family": {f: block(g) for f, g in sorted(families.items())},
            "per_asset": {s.name: {"iou": _r(s.iou), "colour_l1": _r(s.colour_l1)} for s in scores}}


def _r(x: float) -> float:
    return round(float(x), 6)
