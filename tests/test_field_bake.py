"""Coarse-to-fine baking against dense evaluation; floater cleanup; the grid layout."""

from __future__ import annotations

import numpy as np
import pytest
import torch
from _field_toys import tiny_model
from scipy import ndimage

from genfield.field.bake import (
    bake_geometry,
    clean_occupancy,
    lattice_indices,
    upsample,
)
from genfield.field.grid import SIGMA_MAX, box_filter, grid_points


@pytest.fixture(scope="module")
def trained():
    torch.set_num_threads(1)
    return tiny_model(steps=120)


def test_lattices_nest_and_keep_both_ends():
    assert lattice_indices(65, 4).tolist() == list(range(0, 65, 4))
    assert lattice_indices(64, 4).tolist()[-2:] == [60, 63]  # a short last cell
    fine = set(lattice_indices(64, 1).tolist())
    assert set(lattice_indices(64, 4).tolist()) <= fine


def test_upsample_reproduces_linear_functions_exactly():
    # trilinear interpolation is exact for functions linear in each coordinate
    coarse, fine = lattice_indices(33, 4), lattice_indices(33, 1)
    axis = np.linspace(-1, 1, 33)
    f = lambda x, y, z: 2 * x - 3 * y + 0.5 * z + x * y * z  # noqa: E731 (multilinear)
    xs = axis[coarse]
    values = f(*np.meshgrid(xs, xs, xs, indexing="ij"))
    up = upsample(values, coarse, fine)
    assert np.allclose(up, f(*np.meshgrid(axis, axis, axis, indexing="ij")), atol=1e-12)


def test_bake_matches_dense_evaluation(trained):
    # dense: every grid point through the network (strides (1,)); fast: the default strides
    model, _ = trained
    for row in range(3):
        s, a = model.codebook.shape[row], model.codebook.appearance[row]
        fast, stats = model.bake_with_stats(s, a, 49, clean=False)
        dense, dstats = model.bake_with_stats(s, a, 49, clean=False, steps=(1,))
        assert dstats.fraction == 1.0 and stats.fraction < 0.8
        inside_fast = fast.density > SIGMA_MAX / 2
        inside_dense = dense.density > SIGMA_MAX / 2
        assert np.array_equal(inside_fast, inside_dense)
        # in the surface's transition (occupancy 5% to 95%) the albedo is the network's own
        occ = dense.density / SIGMA_MAX
        band = (occ > 0.05) & (occ < 0.95)
        assert np.abs(fast.albedo[band] - dense.albedo[band]).max() < 1e-5
        # elsewhere interpolated between corners beyond the margin (occupancy < 0.7% or
        # > 99.3%); the network between them can stray a little further (3.04% seen on one toy)
        assert np.abs(fast.density - dense.density).max() < 0.05 * SIGMA_MAX


def test_bake_points_follow_the_grid_layout(trained):
    # the baked value at [i, j, k] is the field at grid_points(R)[i, j, k] (indexing="ij")
    model, _ = trained
    s, a = model.codebook.shape[2], model.codebook.appearance[2]
    grid = model.bake(s, a, 17, clean=False)
    pts = grid_points(17).reshape(-1, 3).astype(np.float32)
    occ, albedo = model.query(pts, s, a)
    evaluated = lattice_indices(17, 4)
    sub = np.ix_(evaluated, evaluated, evaluated)
    assert np.allclose(grid.density[sub], (SIGMA_MAX * occ).reshape(17, 17, 17)[sub], atol=1e-3)
    assert np.allclose(grid.albedo[sub], albedo.reshape(17, 17, 17, 3)[sub], atol=1e-6)


def test_strides_must_nest():
    with pytest.raises(ValueError, match="divide"):
        bake_geometry(lambda ijk: (ijk[:, 0], ijk), 17, steps=(4, 3, 1))


def test_cleanup_drops_small_parts_and_keeps_large_ones():
    p = grid_points(33)
    big = np.linalg.norm(p - [0.3, 0, 0], axis=-1) < 0.5
    small = np.linalg.norm(p - [-0.7, -0.7, -0.7], axis=-1) < 0.12
    occ = (big | small).astype(np.float32)
    occ[np.linalg.norm(p - [-0.7, -0.7, -0.7], axis=-1) < 0.18] = np.maximum(
        occ[np.linalg.norm(p - [-0.7, -0.7, -0.7], axis=-1) < 0.18], 0.2)  # a soft halo
    cleaned, parts = clean_occupancy(occ, 0.02)
    assert parts == 1
    assert np.array_equal(cleaned > 0.5, big)
    assert cleaned[np.linalg.norm(p - [-0.7, -0.7, -0.7], axis=-1) < 0.18].max() == 0.0  # halo too
    kept, parts = clean_occupancy(occ, 0.0)
    assert parts == 2 and np.array_equal(kept, occ)
    empty, parts = clean_occupancy(np.zeros((5, 5, 5), np.float32), 0.02)
    assert parts == 0 and not empty.any()


@pytest.mark.parametrize("radius", [1, 2])
def test_box_filter_is_scipys_binary_morphology(radius):
    # reference: scipy.ndimage binary_dilation / binary_erosion (border_value=0) by the 3^3
    # box, iterated; sparse and dense masks, a non-cubic shape so no axis is confused
    rng = np.random.default_rng(3)
    ball = np.ones((3, 3, 3), bool)
    for density in (0.01, 0.8):
        mask = rng.random((9, 12, 15)) < density
        assert np.array_equal(box_filter(mask, grow=True, radius=radius),
                              ndimage.binary_dilation(mask, ball, iterations=radius))
        assert np.array_equal(box_filter(mask, grow=False, radius=radius),
                              ndimage.binary_erosion(mask, ball, iterations=radius, border_value=0))


@pytest.mark.parametrize("resolution", [9, 24, 33])
def test_cell_flags_match_the_closed_cell_definition(resolution):
    # brute force: fine point p lies in coarse cell c iff coarse[c] <= fine[p] <= coarse[c + 1]
    from genfield.field.bake import Cells, _any_in_cells, _points_in_cells

    coarse, fine = lattice_indices(resolution, 4), lattice_indices(resolution, 2)
    inside = (fine[:, None] >= coarse[None, :-1]) & (fine[:, None] <= coarse[None, 1:])  # (nf, nc)
    layout = Cells.of(coarse, fine)
    rng = np.random.default_rng(resolution)
    flags = rng.random((len(fine),) * 3) < 0.05
    cells = rng.random((len(coarse) - 1,) * 3) < 0.1
    want_cells = np.einsum("ia,jb,kc,ijk->abc", inside, inside, inside, flags) > 0
    want_points = np.einsum("ia,jb,kc,abc->ijk", inside, inside, inside, cells) > 0
    assert np.array_equal(_any_in_cells(flags, layout), want_cells)
    assert np.array_equal(_points_in_cells(cells, layout), want_points)


def test_a_shape_baked_again_reuses_its_geometry_with_identical_results(trained):
    model, _ = trained
    s, a1, a2 = model.codebook.shape[1], model.codebook.appearance[1], model.codebook.appearance[2]
    model.forget_shapes()
    alone = model.bake(s, a2, 25)  # nothing in the memo: the whole network
    assert not model._memo  # a shape baked once is not kept (fresh draws would fill the memo)
    model.bake(s, a1, 25)
    assert len(model._memo) == 1  # kept on its second bake, whatever the appearance
    reused = model.bake(s, a2, 25)  # geometry from the memo, only the colour head runs
    assert np.array_equal(reused.density, alone.density)
    assert np.array_equal(reused.albedo, alone.albedo)
    assert not np.array_equal(reused.albedo, model.bake(s, a1, 25).albedo)
    with pytest.raises(ValueError):  # shared between grids, so read-only
        reused.density[0, 0, 0] = 1.0
    model.forget_shapes()


def test_changed_weights_are_never_served_old_geometry(trained):
    model, _ = trained
    s, a = model.codebook.shape[0], model.codebook.appearance[0]
    model.forget_shapes()
    model.bake(s, a, 17)
    before = model.bake(s, a, 17)  # now in the memo
    weight = model.network.trunk[1].weight
    with torch.no_grad():
        weight.mul_(1.5)
    try:
        changed = model.bake(s, a, 17)
        model.forget_shapes()
        assert np.array_equal(changed.density, model.bake(s, a, 17).density)
        assert not np.array_equal(changed.density, before.density)
    finally:
        with torch.no_grad():
            weight.div_(1.5)
        model.forget_shapes()
