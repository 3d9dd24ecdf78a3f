"""The field network: its encoding and first layer follow the equations, and appearance codes
cannot touch occupancy."""

from __future__ import annotations

import math

import numpy as np
import pytest
import torch
from _field_toys import tiny_model

from genfield.field.config import NetworkConfig
from genfield.field.network import FieldNetwork, PositionalEncoding


@pytest.fixture(scope="module")
def trained():
    torch.set_num_threads(1)
    return tiny_model(steps=60)


def test_positional_encoding_is_nerf_eq_4():
    # gamma(p) = (sin(2^0 pi p), cos(2^0 pi p), ..., sin(2^(L-1) pi p), cos(2^(L-1) pi p))
    # per coordinate (Mildenhall et al. 2020, eq. 4), plus p itself; written out by hand here.
    enc = PositionalEncoding(3)
    x = torch.tensor([[0.25, -0.5, 0.125]])
    out = enc(x)[0].numpy()
    assert out.shape == (3 + 6 * 3,)
    assert np.allclose(out[:3], [0.25, -0.5, 0.125])
    for axis, p in enumerate([0.25, -0.5, 0.125]):
        for k in range(3):
            assert out[3 + axis * 3 + k] == pytest.approx(math.sin(2**k * math.pi * p), abs=1e-6)
            assert out[12 + axis * 3 + k] == pytest.approx(math.cos(2**k * math.pi * p), abs=1e-6)


def test_split_first_layer_equals_the_concatenated_input():
    torch.manual_seed(0)
    cfg = NetworkConfig(shape_dim=5, appearance_dim=7, octaves=2, width=16, depth=2, feature_dim=4,
                        colour_width=8)
    net = FieldNetwork(cfg)
    x = torch.rand(2, 7, 3) * 2 - 1
    z = torch.randn(2, 5)
    logit, feature = net.geometry(x, z)
    # the textbook form: W_0 [gamma(x); z] + b_0 on the concatenation (DeepSDF's input)
    inp = torch.cat([net.encoding(x), z[:, None, :].expand(2, 7, 5)], dim=-1)
    h = torch.relu(net.trunk[0](inp))
    for layer in net.trunk[1:]:
        h = torch.relu(layer(h))
    out = net.geometry_out(h)
    assert torch.allclose(logit, out[..., 0], atol=1e-6)
    assert torch.allclose(feature[..., :4], out[..., 1:], atol=1e-6)
    assert torch.equal(feature[..., 4:], net.encoding(x))  # the skip of gamma(x)


def test_grid_tables_give_the_network_function_at_grid_points():
    # the fast path of bakes (per-axis tables of the first layers) against geometry + albedo
    torch.manual_seed(1)
    cfg = NetworkConfig(shape_dim=5, appearance_dim=7, octaves=3, width=16, depth=3, feature_dim=4,
                        colour_width=8, colour_depth=2)
    net = FieldNetwork(cfg)
    axis = torch.linspace(-1, 1, 9)
    ijk = torch.tensor([[0, 0, 0], [8, 3, 5], [4, 4, 4], [1, 7, 2]])
    z_s, z_a = torch.randn(1, 5), torch.randn(1, 7)
    z_a[0, :3] *= 20.0  # the own wave: a few cycles per unit, as spectra give
    with torch.no_grad():
        logit, features = net.grid_geometry(net.trunk_tables(axis, z_s), ijk)
        albedo = net.grid_albedo(net.colour_tables(axis, z_a), ijk, features, z_a)
        x = axis[ijk][None]  # (1, 4, 3) the grid points themselves
        ref_logit, feature = net.geometry(x, z_s)
        ref_albedo = net.albedo(feature, z_a)
    assert torch.allclose(logit, ref_logit[0], atol=1e-5)
    assert torch.allclose(albedo, ref_albedo[0], atol=1e-6)


def test_appearance_changes_leave_occupancy_bit_identical(trained):
    model, _ = trained
    g = np.random.default_rng(0)
    pts = g.uniform(-1, 1, (5000, 3)).astype(np.float32)
    shape = model.codebook.shape[1]
    occ_a, alb_a = model.query(pts, shape, model.codebook.appearance[0])
    occ_b, alb_b = model.query(pts, shape, g.normal(size=model.codebook.appearance_dim) * 3.0)
    assert np.array_equal(occ_a, occ_b)  # bit for bit, not merely close
    assert not np.allclose(alb_a, alb_b)  # the colour did change
    grid_a = model.bake(shape, model.codebook.appearance[0], 33)
    grid_b = model.bake(shape, model.codebook.appearance[2], 33)
    assert np.array_equal(grid_a.density, grid_b.density)
    assert np.array_equal(model.query_occupancy(pts, shape), occ_a)


def test_query_is_zero_outside_the_object_cube(trained):
    model, _ = trained
    pts = np.array([[1.5, 0, 0], [0, -1.01, 0], [0, 0, 0]], np.float32)
    occ, albedo = model.query(pts, model.codebook.shape[0], model.codebook.appearance[0])
    assert occ[0] == 0 and occ[1] == 0
    assert albedo.shape == (3, 3) and albedo.dtype == np.float32
    assert np.all((albedo >= 0) & (albedo <= 1))


def test_query_checks_code_lengths(trained):
    model, _ = trained
    with pytest.raises(ValueError, match="shape code must have 8 entries"):
        model.query(np.zeros((1, 3), np.float32), np.zeros(3), model.codebook.appearance[0])
