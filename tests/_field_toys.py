"""Small analytic shapes (sphere, box, torus) with colours, standing in for training assets.

Each has an exact signed distance, so occupancy and surface points are known in closed form;
they give the field's tests something to overfit in seconds without the asset package.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from genfield.colour import srgb_to_linear
from genfield.seeds import rng


def _sphere(p: np.ndarray, r: float) -> np.ndarray:
    return np.linalg.norm(p, axis=1) - r


def _box(p: np.ndarray, half: np.ndarray) -> np.ndarray:
    # Exact box SDF (Quilez's formula, common practice in SDF modelling)
    q = np.abs(p) - half
    return np.linalg.norm(np.maximum(q, 0.0), axis=1) + np.minimum(q.max(axis=1), 0.0)


def _torus(p: np.ndarray, major: float, minor: float) -> np.ndarray:
    q = np.stack([np.linalg.norm(p[:, :2], axis=1) - major, p[:, 2]], axis=1)
    return np.linalg.norm(q, axis=1) - minor


@dataclass(frozen=True)
class ToyAsset:
    name: str
    family: str
    kind: str
    size: float
    colour: tuple[float, float, float]  # sRGB base colour; a z-gradient is added
    source: str = "toy"
    metric_half_extent: float = 0.05

    def sdf(self, points: np.ndarray) -> np.ndarray:
        p = np.asarray(points, np.float64)
        if self.kind == "sphere":
            return _sphere(p, self.size)
        if self.kind == "box":
            return _box(p, np.array([self.size, self.size * 0.8, self.size * 0.6]))
        return _torus(p, self.size, self.size * 0.5)

    def occupancy(self, points: np.ndarray) -> np.ndarray:
        return (self.sdf(points) <= 0.0).astype(np.float32)

    def colour_srgb(self, points: np.ndarray) -> np.ndarray:
        p = np.asarray(points, np.float64)
        base = np.asarray(self.colour)[None, :]
        shade = 0.15 * (p[:, 2:3] + 1.0)
        return np.clip(base * 0.8 + shade, 0.0, 1.0).astype(np.float32)


@dataclass(frozen=True)
class ToyTruth:
    points: np.ndarray
    occupancy: np.ndarray
    surface_points: np.ndarray
    surface_colour: np.ndarray


def toy_assets(count: int = 4) -> list[ToyAsset]:
    kinds = ("sphere", "box", "torus")
    colours = ((0.8, 0.2, 0.2), (0.2, 0.6, 0.9), (0.9, 0.8, 0.2), (0.3, 0.8, 0.3))
    return [ToyAsset(f"{kinds[i % 3]}-{i:04d}", kinds[i % 3], kinds[i % 3],
                     0.5 + 0.1 * (i // 3), colours[i % 4]) for i in range(count)]


def _project(asset: ToyAsset, p: np.ndarray, iterations: int = 4) -> np.ndarray:
    """Move points onto the zero level set along the SDF's numerical gradient."""
    eps = 1e-4
    for _ in range(iterations):
        d = asset.sdf(p)
        grad = np.stack([(asset.sdf(p + eps * e) - asset.sdf(p - eps * e)) / (2 * eps)
                         for e in np.eye(3)], axis=1)
        grad /= np.maximum(np.linalg.norm(grad, axis=1, keepdims=True), 1e-9)
        p = p - d[:, None] * grad
    return p


def toy_truth(asset: ToyAsset, count: int, *, seed: int) -> ToyTruth:
    """Half uniform in the cube, half near the surface (Gaussian offsets of 0.03)."""
    g = rng(seed, 0, f"toy-{asset.name}")
    surf = _project(asset, g.uniform(-1, 1, (count, 3)))
    near = surf[: count // 2] + g.normal(0, 0.03, (count // 2, 3))
    pts = np.concatenate([g.uniform(-1, 1, (count - count // 2, 3)), near]).astype(np.float32)
    return ToyTruth(points=pts, occupancy=asset.occupancy(pts),
                    surface_points=surf.astype(np.float32),
                    surface_colour=srgb_to_linear(asset.colour_srgb(surf)).astype(np.float32))


def tiny_config(steps: int = 150, **training):
    """A config small enough to train in seconds on toy shapes."""
    from genfield.field.config import config_from_dict

    return config_from_dict({
        "seed": 3, "threads": 1,
        "sources": {"families": {"sphere": 1, "box": 1, "torus": 1}},
        "network": {"shape_dim": 8, "appearance_dim": 8, "octaves": 4, "width": 48, "depth": 3,
                    "feature_dim": 8, "colour_width": 16},
        "training": {"steps": steps, "assets_per_step": 3, "points_per_asset": 512,
                     "surface_points_per_asset": 128, "lr_network": 3e-3, "lr_codes": 3e-2,
                     "warmup_steps": 10, **training},
    })


def tiny_model(steps: int = 150, count: int = 3):
    """A model overfit to ``count`` toy shapes (a few seconds on one thread)."""
    from pathlib import Path

    from genfield.field.checkpoint import new_state
    from genfield.field.data import TrainingData
    from genfield.field.pipeline import model_from_state
    from genfield.field.trainer import run_training

    cfg = tiny_config(steps)
    assets = toy_assets(count)
    data = TrainingData([toy_truth(a, 20_000, seed=1) for a in assets])
    state = run_training(cfg, data, new_state(cfg, count), checkpoint_path=Path("unused.ckpt"),
                         names=[a.name for a in assets], progress=False)
    return model_from_state(cfg, state, assets), assets
