"""The field network: (point, shape code) -> occupancy logit and a geometry feature;
(geometry feature, appearance code) -> linear albedo.

Equations (DEVELOPERS.md, "The field"):

    gamma(x) = (x, sin(2^k pi x), cos(2^k pi x))_{k < L}       positional encoding, NeRF eq. 4
                                                                (Mildenhall et al. 2020)
    h_0 = relu(W_0 [gamma(x); z_s] + b_0)                       auto-decoder input, the code
    h_i = relu(W_i h_{i-1} + b_i),  i = 1 .. D-1                concatenated to the point as
    (logit, f) = W_o h_{D-1} + b_o                              in DeepSDF (Park et al. 2019)
    occupancy = sigmoid(logit)
    albedo = sigmoid(V_1 relu(V_0 [f; z_a] + c_0) + c_1)        linear RGB in [0, 1]

The appearance code z_a enters only the colour head, so no appearance code can change the
occupancy: the geometry path does not read it at all.

The first layer is evaluated as ``W_0[:, :E] gamma(x) + (W_0[:, E:] z_s + b_0)``: the code's
share is computed once per asset, not once per point.
"""

from __future__ import annotations

import math

import torch
from torch import nn
from torch.nn import functional as F

from genfield.field.config import NetworkConfig


class PositionalEncoding(nn.Module):
    """gamma(x) for x in [-1, 1]^3: (N, 3) -> (N, 3 + 6 L), columns (x, sin, cos)."""

    def __init__(self, octaves: int) -> None:
        super().__init__()
        self.register_buffer("freqs", math.pi * 2.0 ** torch.arange(octaves, dtype=torch.float32),
                             persistent=False)

    @property
    def out_dim(self) -> int:
        return 3 + 6 * int(self.freqs.numel())

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        xb = (x[..., None] * self.freqs).flatten(-2)  # (..., 3 L), axis-major
        return torch.cat([x, torch.sin(xb), torch.cos(xb)], dim=-1)  # (..., 3 + 6 L)


class FieldNetwork(nn.Module):
    """The geometry trunk and the colour head (sizes from a NetworkConfig)."""

    def __init__(self, cfg: NetworkConfig) -> None:
        super().__init__()
        self.cfg = cfg
        self.encoding = PositionalEncoding(cfg.octaves)
        self.trunk = nn.ModuleList(
            [nn.Linear(self.encoding.out_dim + cfg.shape_dim, cfg.width)]
            + [nn.Linear(cfg.width, cfg.width) for _ in range(cfg.depth - 1)]
        )
        self.geometry_out = nn.Linear(cfg.width, 1 + cfg.feature_dim)
        self.colour_in = nn.Linear(cfg.feature_dim + cfg.appearance_dim, cfg.colour_width)
        self.colour_out = nn.Linear(cfg.colour_width, 3)

    def geometry(self, x: torch.Tensor, shape: torch.Tensor) -> tuple[torch.Tensor, torch.Tensor]:
        """Occupancy logits and geometry features.

        x: (B, P, 3) object-frame points; shape: (B, Ds) one code per row of points.
        Returns logit (B, P) and feature (B, P, F).
        """
        enc = self.encoding(x)  # (B, P, E)
        first = self.trunk[0]
        e = enc.shape[-1]
        code_part = F.linear(shape, first.weight[:, e:], first.bias)  # (B, W)
        h = torch.relu(F.linear(enc, first.weight[:, :e]) + code_part[:, None, :])  # (B, P, W)
        for layer in self.trunk[1:]:
            h = torch.relu(layer(h))  # (B, P, W)
        out = self.geometry_out(h)  # (B, P, 1 + F)
        return out[..., 0], out[..., 1:]

    def colour(self, feature: torch.Tensor, appearance: torch.Tensor) -> torch.Tensor:
        """Linear albedo (B, P, 3) in [0, 1] from features (B, P, F) and codes (B, Da)."""
        f = self.cfg.feature_dim
        w, b = self.colour_in.weight, self.colour_in.bias
        code_part = F.linear(appearance, w[:, f:], b)  # (B, Cw)
        h = torch.relu(F.linear(feature, w[:, :f]) + code_part[:, None, :])  # (B, P, Cw)
        return torch.sigmoid(self.colour_out(h))  # (B, P, 3)
