"""The field network: (point, shape code) -> occupancy logit and a geometry feature;
(geometry feature, appearance code) -> linear albedo.

Equations (DEVELOPERS.md, "The field"):

    gamma(x) = (x, sin(2^k pi x), cos(2^k pi x))_{k < L}       positional encoding, NeRF eq. 4
                                                                (Mildenhall et al. 2020)
    h_0 = relu(W_0 [gamma(x); z_s] + b_0)                       auto-decoder input, the code
    h_i = relu(W_i h_{i-1} + b_i),  i = 1 .. D-1                concatenated to the point as
    (logit, t) = W_o h_{D-1} + b_o                              in DeepSDF (Park et al. 2019)
    occupancy = sigmoid(logit)
    f = [t; gamma(x)]                                           the geometry feature: the
                                                                trunk's output and a skip of
                                                                the point's encoding
    z_a = [k_0; p_0; z_r]                                       the asset's own wave (k_0, p_0)
    u(x) = (sin(h (k_0 . x + p_0)), cos(...))_{h = 1 .. H}      and its H harmonics
    (k_m, p_m) = K_m z_r + k0_m,  m = 1 .. K                    K plane waves steered by the
    w_m(x) = sin(k_m . x + p_m)                                 rest of the code (direction,
                                                                frequency, phase linear in z_r)
    g_0 = relu(V_0 [f; w(x); u(x); z_r] + c_0)                  colour head, C layers
    g_j = relu(V_j g_{j-1} + c_j),  j = 1 .. C-1
    albedo = sigmoid(V_o g_{C-1} + c_o)                         linear RGB in [0, 1]

The appearance code z_a enters only the colour head, so no appearance code can change the
occupancy: the geometry path does not read it at all. The skip of gamma(x) into f lets the
colour follow painted patterns (bands, two-tone splits) that the geometry does not show:
without it the colour L1 of such assets stayed at that of their median colour for the first
300 steps (0.157 mean over four washers, against 0.070 with it; measured on 2 shared cores).
The waves w(x) serve painted bands, square waves along some direction at some frequency,
which the fixed octaves of gamma(x) compose only with many units per asset: trained on the
default preset (2500 steps), ten banded assets averaged colour L1 0.109 without waves and 0.088
with 16 (0.029 over all 32 assets with 64 waves, 0.033 with 16, 0.041 with none). Their
starting frequencies are random (Fourier features with random directions, Tancik et al. 2020),
shared by all codes until the codes steer them.

Gradient descent finds the right frequency of a wave slowly (a wave slightly off drifts out of
phase across the object), so each asset also owns one wave outright: the first four entries of
its appearance code are its wave vector k_0 (radians per unit) and phase p_0, started at the
peak of the asset's colour spectrum (``genfield.field.spectrum``) and refined with the code;
the head sees H harmonics of it, enough for the sharp edges of a square wave. On the ten banded
assets of the default preset, colour only (2500 steps, same head): 0.038 mean colour L1 with
the steered waves alone, 0.005 with the own wave started at the spectrum's peak. k_0 and p_0
are not pulled towards zero by the code penalty (``leading_entries``), and the head does not
read them as numbers, only through u(x).

The first layer is evaluated as ``W_0[:, :E] gamma(x) + (W_0[:, E:] z_s + b_0)``: the code's
share is computed once per asset, not once per point (the same for V_0 and z_a).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import torch
from torch import nn
from torch.nn import functional as F

from genfield.field.config import NetworkConfig
from genfield.field.spectrum import WAVE_ENTRIES


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

    def axis_columns(self, axis: int) -> list[int]:
        """The columns of gamma(x) that depend on coordinate ``axis`` alone."""
        n = int(self.freqs.numel())
        return ([axis] + [3 + axis * n + k for k in range(n)]
                + [3 + 3 * n + axis * n + k for k in range(n)])

    def axis_features(self, t: torch.Tensor) -> torch.Tensor:
        """(R,) values of one coordinate -> (R, 1 + 2 L): (t, sin(2^k pi t), cos(2^k pi t)),
        in the order of ``axis_columns``."""
        tb = t[:, None] * self.freqs  # (R, L)
        return torch.cat([t[:, None], torch.sin(tb), torch.cos(tb)], dim=1)


@dataclass(frozen=True)
class AxisTables:
    """A first layer's pre-activation on a grid, in per-axis parts (``FieldNetwork.trunk_tables``,
    ``colour_tables``): at grid point (i, j, k) it is xy[i R + j] + z[k], the code's share and
    the bias folded into z. The colour head's tables leave out its features and waves, which
    are not sums of per-axis parts."""

    xy: torch.Tensor  # (R * R, W)
    z: torch.Tensor  # (R, W)
    axis: torch.Tensor  # (R,) the coordinates themselves

    def at(self, ijk: torch.Tensor) -> torch.Tensor:
        """(m, W) at grid points ijk (m, 3) int64; index_select: 3x faster than [i, j]."""
        h = self.xy.index_select(0, ijk[:, 0] * len(self.axis) + ijk[:, 1])
        h += self.z.index_select(0, ijk[:, 2])
        return h


class FieldNetwork(nn.Module):
    """The geometry trunk and the colour head (sizes from a NetworkConfig)."""

    def __init__(self, cfg: NetworkConfig) -> None:
        super().__init__()
        self.cfg = cfg
        if cfg.colour_harmonics and cfg.appearance_dim <= WAVE_ENTRIES:
            raise ValueError(f"appearance_dim must be > {WAVE_ENTRIES} with colour harmonics "
                             f"(the first entries hold the own wave), got {cfg.appearance_dim}")
        self.encoding = PositionalEncoding(cfg.octaves)
        self.trunk = nn.ModuleList(
            [nn.Linear(self.encoding.out_dim + cfg.shape_dim, cfg.width)]
            + [nn.Linear(cfg.width, cfg.width) for _ in range(cfg.depth - 1)]
        )
        self.geometry_out = nn.Linear(cfg.width, 1 + cfg.feature_dim)
        self.waves = None  # (k, phase) of each wave from z_r; none in files written before them
        if cfg.colour_waves:
            self.waves = nn.Linear(self.code_rest, 4 * cfg.colour_waves)
            with torch.no_grad():  # shared directions and frequencies up to ~8 cycles per unit
                self.waves.weight.mul_(0.1)
                self.waves.bias.copy_(torch.cat([torch.randn(cfg.colour_waves, 3) * 15.0,
                                                 torch.rand(cfg.colour_waves, 1) * 2 * math.pi],
                                                1).ravel())
        self.colour = nn.ModuleList(
            [nn.Linear(self.feature_width + cfg.colour_waves + 2 * cfg.colour_harmonics
                       + self.code_rest, cfg.colour_width)]
            + [nn.Linear(cfg.colour_width, cfg.colour_width) for _ in range(cfg.colour_depth - 1)]
        )
        self.colour_out = nn.Linear(cfg.colour_width, 3)

    @property
    def leading_entries(self) -> int:
        """Entries of the appearance code that hold the asset's own wave (k_0, p_0); 0 without."""
        return WAVE_ENTRIES if self.cfg.colour_harmonics else 0

    @property
    def code_rest(self) -> int:
        """Length of z_r, the appearance code after the own wave."""
        return self.cfg.appearance_dim - self.leading_entries

    def rest_of(self, appearance: torch.Tensor) -> torch.Tensor:
        """z_r of codes (B, Da): what the code penalty, the steered waves and V_0 read."""
        return appearance[:, self.leading_entries :]

    @property
    def feature_width(self) -> int:
        """Width of the geometry feature f = [t; gamma(x)]: F + 3 + 6 L."""
        return self.cfg.feature_dim + self.encoding.out_dim

    def geometry(self, x: torch.Tensor, shape: torch.Tensor) -> tuple[torch.Tensor, torch.Tensor]:
        """Occupancy logits and geometry features.

        x: (B, P, 3) object-frame points; shape: (B, Ds) one code per row of points.
        Returns logit (B, P) and feature (B, P, feature_width).
        """
        enc = self.encoding(x)  # (B, P, E)
        first = self.trunk[0]
        e = enc.shape[-1]
        code_part = F.linear(shape, first.weight[:, e:], first.bias)  # (B, W)
        h = torch.relu_(F.linear(enc, first.weight[:, :e]) + code_part[:, None, :])  # (B, P, W)
        for layer in self.trunk[1:]:
            h = torch.relu_(layer(h))  # (B, P, W); in place: ReLU's backward needs only its output
        out = self.geometry_out(h)  # (B, P, 1 + F)
        return out[..., 0], torch.cat([out[..., 1:], enc], dim=-1)  # (B, P), (B, P, F + E)

    def wave_features(self, x: torch.Tensor, appearance: torch.Tensor) -> torch.Tensor:
        """sin(k(z_a) . x + phase(z_a)) for each of the K waves: (B, P, 3), (B, Da) -> (B, P, K).

        A painted band pattern is a square wave along some direction at some frequency; the
        fixed octaves of gamma(x) compose one only with many units per asset. Here the
        appearance code steers K plane waves (direction, frequency and phase are linear in
        it), so a pattern needs a wave or two and a threshold."""
        w = self.waves(self.rest_of(appearance))  # (B, 4 K)
        w = w.view(appearance.shape[0], -1, 4)  # (B, K, 4)
        return torch.sin(torch.einsum("bpc,bkc->bpk", x, w[..., :3]) + w[:, None, :, 3])

    def harmonic_features(self, x: torch.Tensor, appearance: torch.Tensor) -> torch.Tensor:
        """u(x): sin and cos of h (k_0 . x + p_0), h = 1 .. H, for the wave in the first
        entries of each code: (B, P, 3), (B, Da) -> (B, P, 2 H)."""
        k0, p0 = appearance[:, :3], appearance[:, 3]
        phase = torch.einsum("bpc,bc->bp", x, k0) + p0[:, None]  # (B, P)
        h = torch.arange(1, self.cfg.colour_harmonics + 1, dtype=x.dtype)
        hp = phase[..., None] * h  # (B, P, H)
        return torch.cat([torch.sin(hp), torch.cos(hp)], dim=-1)

    def _pattern_part(self, x: torch.Tensor, appearance: torch.Tensor,
                      weight: torch.Tensor) -> torch.Tensor:
        """The waves' and harmonics' share of the colour head's first layer, (B, P, Cw); the
        columns of ``weight`` are [w(x); u(x)] (the network has at least one of them)."""
        parts = []
        if self.cfg.colour_waves:
            parts.append(self.wave_features(x, appearance))
        if self.cfg.colour_harmonics:
            parts.append(self.harmonic_features(x, appearance))
        return F.linear(torch.cat(parts, dim=-1), weight)

    def albedo(self, feature: torch.Tensor, appearance: torch.Tensor) -> torch.Tensor:
        """Linear albedo (B, P, 3) in [0, 1] from features (B, P, F + E) and codes (B, Da)."""
        f, k = self.feature_width, self.cfg.colour_waves + 2 * self.cfg.colour_harmonics
        first = self.colour[0]
        code_part = F.linear(self.rest_of(appearance), first.weight[:, f + k :], first.bias)  # (B, Cw)
        h = F.linear(feature, first.weight[:, :f]) + code_part[:, None, :]  # (B, P, Cw)
        if k:
            x = feature[..., self.cfg.feature_dim : self.cfg.feature_dim + 3]  # gamma(x) starts with x
            h = h + self._pattern_part(x, appearance, first.weight[:, f : f + k])
        h = torch.relu_(h)
        for layer in self.colour[1:]:
            h = torch.relu_(layer(h))  # (B, P, Cw)
        return torch.sigmoid(self.colour_out(h))  # (B, P, 3)

    # --- grids: the same function, with the encoding's share of the first layers per axis ---
    def _axis_parts(self, axis: torch.Tensor, weight: torch.Tensor, offset: int,
                    code_part: torch.Tensor) -> AxisTables:
        """Tables of a first layer whose gamma(x) columns start at ``offset`` of ``weight``."""
        part = self.encoding.axis_features(axis)  # (R, 1 + 2 L)
        tx, ty, tz = (part @ weight[:, [offset + i for i in self.encoding.axis_columns(a)]].T
                      for a in range(3))  # (R, W) each
        r = len(axis)
        return AxisTables(xy=(tx[:, None] + ty[None, :]).reshape(r * r, -1), z=tz + code_part, axis=axis)

    def trunk_tables(self, axis: torch.Tensor, shape: torch.Tensor) -> AxisTables:
        """The trunk's first layer on the grid ``(axis[i], axis[j], axis[k])`` for shape (1, Ds).

        gamma(x) is a concatenation of per-coordinate parts, so a first layer's product with it
        is a sum of three per-axis products: on a grid, tables (the x and y parts summed into
        one (R R, W) table, the code's share folded into the z table) replace the encoding and
        the first matrix product at every point (exact up to float rounding;
        ``tests/test_field_network.py`` compares it with ``geometry`` and ``albedo``).
        """
        first, e = self.trunk[0], self.encoding.out_dim
        return self._axis_parts(axis, first.weight, 0, F.linear(shape, first.weight[:, e:], first.bias))

    def colour_tables(self, axis: torch.Tensor, appearance: torch.Tensor) -> AxisTables:
        """The colour head's first layer on the grid for appearance (1, Da), less features and
        waves (``trunk_tables``)."""
        first, e, f = self.colour[0], self.encoding.out_dim, self.cfg.feature_dim
        waves = self.cfg.colour_waves + 2 * self.cfg.colour_harmonics
        code_part = F.linear(self.rest_of(appearance), first.weight[:, f + e + waves :], first.bias)
        return self._axis_parts(axis, first.weight, f, code_part)

    def grid_geometry(self, tables: AxisTables, ijk: torch.Tensor) -> tuple[torch.Tensor, torch.Tensor]:
        """Logits (m,) and geometry features t (m, F) at grid points ijk (m, 3) int64."""
        h = torch.relu_(tables.at(ijk))  # (m, W)
        for layer in self.trunk[1:]:
            h = torch.relu_(layer(h))  # (m, W)
        out = self.geometry_out(h)  # (m, 1 + F)
        return out[:, 0], out[:, 1:]

    def grid_albedo(self, tables: AxisTables, ijk: torch.Tensor, features: torch.Tensor,
                    appearance: torch.Tensor) -> torch.Tensor:
        """Albedo (m, 3) at grid points ijk (m, 3) from their features t (m, F)
        (``grid_geometry``), for the appearance of ``tables`` (again, for the waves)."""
        e, f = self.encoding.out_dim, self.cfg.feature_dim
        c_first = self.colour[0]
        g = F.linear(features, c_first.weight[:, :f])  # (m, Cw)
        g += tables.at(ijk)
        waves = self.cfg.colour_waves + 2 * self.cfg.colour_harmonics
        if waves:
            axis = tables.axis
            x = torch.stack([axis[ijk[:, 0]], axis[ijk[:, 1]], axis[ijk[:, 2]]], 1)[None]  # (1, m, 3)
            g += self._pattern_part(x, appearance, c_first.weight[:, f + e : f + e + waves])[0]
        g = torch.relu_(g)
        for layer in self.colour[1:]:
            g = torch.relu_(layer(g))  # (m, Cw)
        return torch.sigmoid(self.colour_out(g))
