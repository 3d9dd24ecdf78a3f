"""Training batches: ground-truth samples of every asset stacked into tensors, drawn per step.

Each asset's ground truth (genfield.assets.sample_ground_truth) is a set of occupancy samples
(points, occupancy in [0, 1]) and coloured surface samples. A batch takes ``assets_per_step``
assets and, from each, ``points_per_asset`` occupancy samples and ``surface_points_per_asset``
colour samples. The draws of step ``k`` come from the stream ``rng(seed, k, "field-batch")``
alone, so a run resumed from a checkpoint at step k sees the very batches it would have seen.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

import numpy as np
import torch

from genfield.seeds import rng


class GroundTruthLike(Protocol):
    points: np.ndarray  # (N, 3) float32, object frame
    occupancy: np.ndarray  # (N,) float32 in [0, 1]
    surface_points: np.ndarray  # (M, 3) float32
    surface_colour: np.ndarray  # (M, 3) float32, linear RGB


@dataclass(frozen=True)
class Batch:
    """One step's samples. ``assets`` (B,) rows of the code table."""

    assets: torch.Tensor  # (B,) int64
    points: torch.Tensor  # (B, P, 3)
    occupancy: torch.Tensor  # (B, P)
    surface_points: torch.Tensor  # (B, Q, 3)
    surface_colour: torch.Tensor  # (B, Q, 3)
    code_noise: torch.Tensor | None = None  # (B, Ds + Da) added to the codes, or None


class TrainingData:
    """All assets' samples as (assets, samples, ...) tensors; every asset keeps the same count
    (the smallest asset's), so one gather draws a whole batch.

    The last ``held_out_surface`` surface samples of every asset are left out, for scoring.
    """

    def __init__(self, ground_truth: list[GroundTruthLike], held_out_surface: int = 0) -> None:
        if not ground_truth:
            raise ValueError("no ground truth to train on")
        n = min(len(g.points) for g in ground_truth)
        m = min(len(g.surface_points) for g in ground_truth) - held_out_surface
        if n == 0 or m <= 0:
            raise ValueError("an asset has too few occupancy or surface samples")

        def stack(arrays: list[np.ndarray], count: int) -> torch.Tensor:
            return torch.from_numpy(np.stack([np.asarray(a[:count], np.float32) for a in arrays]))

        self.points = stack([g.points for g in ground_truth], n)  # (A, N, 3)
        self.occupancy = stack([g.occupancy for g in ground_truth], n)  # (A, N)
        self.surface_points = stack([g.surface_points for g in ground_truth], m)  # (A, M, 3)
        self.surface_colour = stack([g.surface_colour for g in ground_truth], m)  # (A, M, 3)

    @property
    def asset_count(self) -> int:
        return int(self.points.shape[0])

    def batch(self, seed: int, step: int, assets: int, points: int, surface: int,
              code_noise: float = 0.0, code_dim: int = 0) -> Batch:
        """The samples of step ``step`` (a pure function of seed and step), and with
        ``code_noise`` > 0 Gaussian noise of that std for ``code_dim`` code entries per asset."""
        g = rng(seed, step, "field-batch")
        a = self.asset_count
        chosen = np.sort(g.choice(a, size=min(assets, a), replace=False))  # (B,)
        pi = g.integers(0, self.points.shape[1], size=(len(chosen), points))  # (B, P)
        si = g.integers(0, self.surface_points.shape[1], size=(len(chosen), surface))  # (B, Q)
        rows = torch.from_numpy(chosen)[:, None]  # (B, 1)
        pi_t, si_t = torch.from_numpy(pi), torch.from_numpy(si)
        noise = (torch.from_numpy(g.normal(0.0, code_noise, (len(chosen), code_dim))
                                  .astype(np.float32)) if code_noise > 0 else None)
        return Batch(
            assets=torch.from_numpy(chosen),
            points=self.points[rows, pi_t],
            occupancy=self.occupancy[rows, pi_t],
            surface_points=self.surface_points[rows, si_t],
            surface_colour=self.surface_colour[rows, si_t],
            code_noise=noise,
        )
