"""A stand-in for a trained field with the same per-query cost, for benchmarks only.

Until a trained model can be made inside a benchmark run, the renderer's speed is measured
against a model whose every query runs a network of the field's size (genfield.field's
default: positional encoding with 6 octaves, NeRF eq. 4; a geometry trunk of 4 x 128 ReLU
layers fed the encoding and the shape code, as in DeepSDF; a 16-wide feature into a 64-wide
colour head with the appearance code). Its weights are random, so the geometry comes from an
``AnalyticModel`` and the network's outputs perturb it (the surface moves by up to
``edge`` along the logit, the albedo by up to 10%): every output depends on the network, so
its cost cannot be skipped. The analytic part adds roughly a tenth to each query's cost
(measured: ~1M SDF evaluations/s against ~0.1-0.2M network queries/s on 2 shared cores).

``bake`` is coarse to fine like the field's own (``genfield.field.bake.bake_arrays``): the
network runs on a stride-4 lattice everywhere and only near surfaces at full resolution.
"""

from __future__ import annotations

import math

import numpy as np
import torch
from torch import nn

from genfield.field.grid import FieldGrid, density_from_occupancy
from genfield.render.analytic import BAKE_EDGE_CELLS, AnalyticModel

CHUNK = 16384  # points per network call


class _Network(nn.Module):
    """Encoding, 4 x 128 ReLU trunk, colour head: the field network's shape (module doc)."""

    def __init__(self, shape_dim: int, appearance_dim: int, seed: int) -> None:
        super().__init__()
        g = torch.Generator().manual_seed(seed)
        self.register_buffer("freqs", math.pi * 2.0 ** torch.arange(6, dtype=torch.float32))
        enc = 3 + 6 * 6
        widths = [enc + shape_dim, 128, 128, 128, 128]
        self.trunk = nn.ModuleList(nn.Linear(a, b) for a, b in zip(widths[:-1], widths[1:], strict=True))
        self.out = nn.Linear(128, 1 + 16)
        self.colour_in = nn.Linear(16 + appearance_dim, 64)
        self.colour_out = nn.Linear(64, 3)
        with torch.no_grad():
            for p in self.parameters():
                p.copy_(torch.randn(p.shape, generator=g) / math.sqrt(max(p.shape[-1], 1)))

    def forward(self, x: torch.Tensor, shape: torch.Tensor,
                appearance: torch.Tensor) -> tuple[torch.Tensor, torch.Tensor]:
        xb = (x[:, :, None] * self.freqs).flatten(1)  # (n, 18)
        h = torch.cat([x, torch.sin(xb), torch.cos(xb), shape.expand(len(x), -1)], dim=1)
        for layer in self.trunk:
            h = torch.relu(layer(h))  # (n, 128)
        out = self.out(h)  # (n, 17)
        c = torch.relu(self.colour_in(torch.cat([out[:, 1:], appearance.expand(len(x), -1)], dim=1)))
        return torch.tanh(out[:, 0]), torch.sigmoid(self.colour_out(c))  # (n,), (n, 3)


class MlpStandIn:
    """``query`` and ``bake`` of an AnalyticModel, each query paying for a field-sized network."""

    def __init__(self, analytic: AnalyticModel, *, seed: int = 0) -> None:
        torch.set_flush_denormal(True)  # as the field's Model does: denormals slow products 2-3x
        self.analytic = analytic
        self.network = _Network(analytic.shape_dim, analytic.appearance_dim, seed).eval()
        self.queries = 0  # points queried so far, for the benchmark's notes

    def shape_code(self, i: int) -> np.ndarray:
        return self.analytic.shape_code(i)

    def appearance_code(self, i: int) -> np.ndarray:
        return self.analytic.appearance_code(i)

    def _logits_albedo(self, points: np.ndarray, shape: np.ndarray, appearance: np.ndarray,
                       edge: float) -> tuple[np.ndarray, np.ndarray]:
        pts = np.ascontiguousarray(points, dtype=np.float32).reshape(-1, 3)
        self.queries += len(pts)
        bump = np.empty(len(pts), np.float32)
        tint = np.empty((len(pts), 3), np.float32)
        s = torch.from_numpy(np.asarray(shape, np.float32))[None]
        a = torch.from_numpy(np.asarray(appearance, np.float32))[None]
        with torch.inference_mode():
            for i in range(0, len(pts), CHUNK):
                b, c = self.network(torch.from_numpy(pts[i : i + CHUNK]), s, a)
                bump[i : i + CHUNK], tint[i : i + CHUNK] = b.numpy(), c.numpy()
        occupancy, albedo = self.analytic._field(pts, shape, appearance, edge)
        logit = np.log(np.clip(occupancy, 1e-12, None)) - np.log(np.clip(1.0 - occupancy, 1e-12, None))
        return logit + bump, albedo * (0.9 + 0.1 * tint)

    def query(self, points: np.ndarray, shape: np.ndarray,
              appearance: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Occupancy (N,) and linear albedo (N, 3) float32 at object-frame points (N, 3)."""
        logit, albedo = self._logits_albedo(points, shape, appearance, self.analytic.edge)
        return (1.0 / (1.0 + np.exp(-np.clip(logit, -60, 60)))).astype(np.float32), albedo

    def bake(self, shape: np.ndarray, appearance: np.ndarray, resolution: int) -> FieldGrid:
        """Coarse-to-fine bake through the network (module doc)."""
        from genfield.field.bake import bake_arrays

        edge = max(self.analytic.edge, BAKE_EDGE_CELLS * 2.0 / (resolution - 1))

        def geometry(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            logit, albedo = self._logits_albedo(p, shape, appearance, edge)
            return logit.astype(np.float32), albedo  # the albedo rides along as the "feature"

        logits, albedo, _ = bake_arrays(geometry, lambda feature: feature, resolution)
        occupancy = 1.0 / (1.0 + np.exp(-np.clip(logits, -60.0, 60.0)))
        return FieldGrid(density=density_from_occupancy(occupancy).astype(np.float32),
                         albedo=np.clip(albedo, 0.0, 1.0).astype(np.float32))
