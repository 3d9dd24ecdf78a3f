"""Volume rendering and composition against published formulas (Beer-Lambert, NeRF eq. 3)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import torch

from genfield.field.grid import SIGMA_MAX, FieldGrid, grid_points
from genfield.render.composite import composite, merge
from genfield.render.grids import SHARPNESS, prepare, reconstruct, sample
from genfield.render.march import Placed, Samples, box_interval, march_all, transmittance
from genfield.scene import Pose

torch.set_num_threads(1)


def constant_placed(occupancy: float, translation=(0.0, 0.0, 0.0), scale: float = 1.0,
                    resolution: int = 17) -> Placed:
    """An object cube of one constant occupancy (a homogeneous medium)."""
    r = resolution
    grid = FieldGrid(density=np.full((r, r, r), SIGMA_MAX * occupancy, np.float32),
                     albedo=np.full((r, r, r, 3), 0.5, np.float32))
    return Placed.make(prepare(grid), Pose.from_ypr(translation, 0.0, 0.0, 0.0, scale))


def rays(origins, directions) -> tuple[np.ndarray, np.ndarray]:
    o = np.asarray(origins, np.float64).reshape(-1, 3)
    d = np.asarray(directions, np.float64).reshape(-1, 3)
    d = d / np.linalg.norm(d, axis=1, keepdims=True)
    return np.ascontiguousarray(o.T), np.ascontiguousarray(d.T)  # (3, N) each


def test_alpha_of_one_interval_is_one_minus_exp():
    # NeRF eq. 3 (Mildenhall et al. 2020): alpha = 1 - exp(-sigma delta); sigma 1, delta 0.5:
    # 1 - exp(-0.5) = 0.393469 (e^-0.5 = 0.6065307).
    s = Samples(ray=np.array([0]), step=np.array([3]), points=np.zeros((3, 1), np.float32),
                sigma=np.array([1.0], np.float32))
    merged = composite([s], np.array([0.5]), 1)
    assert merged.weight[0] == pytest.approx(0.393469, abs=1e-6)
    assert merged.alpha[0] == pytest.approx(0.393469, abs=1e-6)


def test_transmittance_is_the_product_of_interval_transmittances():
    # T_i = prod_{j<i} (1 - alpha_j) = exp(-sum sigma_j delta) (Max 1995, eq. 1 by quadrature)
    sig = np.array([0.3, 2.0, 0.7, 5.0], np.float32)
    s = Samples(ray=np.zeros(4, np.int64), step=np.arange(4), points=np.zeros((3, 4), np.float32),
                sigma=sig)
    merged = composite([s], np.array([0.25]), 1)
    a = 1.0 - np.exp(-sig.astype(np.float64) * 0.25)
    t = np.cumprod(np.r_[1.0, 1.0 - a[:-1]])
    assert np.allclose(merged.weight, t * a, atol=1e-7)
    assert merged.alpha[0] == pytest.approx(1.0 - np.prod(1.0 - a), abs=1e-9)


def test_reconstruction_keeps_the_surface_level_and_saturates():
    o = np.array([0.0, 0.4, 0.5 - 0.5 / SHARPNESS, 0.5, 0.5 + 0.5 / SHARPNESS, 0.9, 1.0])
    sig = reconstruct(SIGMA_MAX * o) / SIGMA_MAX
    assert np.allclose(sig, [0.0, 0.0, 0.0, 0.5, 1.0, 1.0, 1.0], atol=1e-12)
    # the linear part of the ramp: 1/2 + SHARPNESS (o - 1/2)
    assert reconstruct(np.array([SIGMA_MAX * 0.51]))[0] == pytest.approx(SIGMA_MAX * (0.5 + SHARPNESS * 0.01))


@pytest.mark.parametrize("direction", [(1, 0, 0), (1, 1, 0), (1, 1, 1), (0.3, -0.2, 1.0)])
def test_homogeneous_cube_transmittance_follows_beer_lambert(direction):
    # Beer-Lambert: T = exp(-sigma d) through a homogeneous medium of thickness d. Rays through
    # the cube's centre; the chord of a unit-direction ray through the centre of the cube
    # [-s, s]^3 is 2 s / max|d_i| (it leaves through the face of the largest component).
    scale = 0.5
    occupancy = 0.5 - 0.49 / SHARPNESS  # reconstructs to sigma_obj = 0.01 SIGMA_MAX = 4 per unit
    placed = constant_placed(occupancy, scale=scale)
    sigma_world = reconstruct(np.array([SIGMA_MAX * occupancy]))[0] / scale
    d = np.asarray(direction, float) / np.linalg.norm(direction)
    chord = 2 * scale / np.max(np.abs(d))
    o3, d3 = rays(-3.0 * d, d)
    got = transmittance([placed], o3, d3, step=0.5)[0]
    step = 0.5 * scale * 2.0 / 16  # half a cell of the 17^3 grid, metres
    tau = sigma_world * chord
    assert got == pytest.approx(math.exp(-tau), rel=sigma_world * step)  # within one interval


def test_densities_add_where_two_media_overlap():
    # Two homogeneous cubes on one ray: T = exp(-(sigma_a L_a + sigma_b L_b)) and each object
    # alone has alpha 1 - exp(-sigma_k L_k) (Beer-Lambert with additive extinction).
    a = constant_placed(0.5 - 0.45 / SHARPNESS, (0.0, 0.0, 0.0), 1.0)
    b = constant_placed(0.5 - 0.3 / SHARPNESS, (0.5, 0.0, 0.0), 1.0)
    o3, d3 = rays([-4.0, 0.01, 0.02], [1.0, 0.0, 0.0])
    samples, delta = march_all([a, b], o3, d3, np.array([np.inf]), step=0.5)
    merged = composite(samples, delta, 1)
    sa = reconstruct(np.array([SIGMA_MAX * (0.5 - 0.45 / SHARPNESS)]))[0]
    sb = reconstruct(np.array([SIGMA_MAX * (0.5 - 0.3 / SHARPNESS)]))[0]
    tol = (sa + sb) * delta[0]
    assert merged.alpha[0] == pytest.approx(1.0 - math.exp(-(sa * 2.0 + sb * 2.0)), abs=tol)
    assert merged.alone[0, 0] == pytest.approx(1.0 - math.exp(-sa * 2.0), abs=tol)
    assert merged.alone[1, 0] == pytest.approx(1.0 - math.exp(-sb * 2.0), abs=tol)
    assert merged.shares[:, 0].sum() == pytest.approx(merged.alpha[0], abs=1e-9)
    # at every shared step the merged density is the sum of the objects' densities there
    expected: dict[tuple[int, int], float] = {}
    for s in samples:
        for r, j, v in zip(s.ray, s.step, s.sigma, strict=True):
            expected[(int(r), int(j))] = expected.get((int(r), int(j)), 0.0) + float(v)
    got = {(int(r), int(j)): float(v) for r, j, v in zip(merged.ray, merged.step, merged.sigma, strict=True)}
    assert got.keys() == expected.keys()
    assert all(got[k] == pytest.approx(expected[k], rel=1e-6) for k in got)
    overlap = [k for k in got if k in {(int(r), int(j)) for r, j in zip(samples[0].ray, samples[0].step, strict=True)}
               and k in {(int(r), int(j)) for r, j in zip(samples[1].ray, samples[1].step, strict=True)}]
    assert overlap  # the test exercises shared steps


def test_merge_groups_rays_and_orders_steps_like_a_sort():
    g = np.random.default_rng(3)
    objs = []
    for _ in range(3):
        pairs = sorted({(int(r), int(j)) for r, j in zip(g.integers(0, 40, 300), g.integers(0, 60, 300),
                                                         strict=True)})
        r, j = np.array(pairs).T
        objs.append(Samples(ray=r, step=j, points=np.zeros((3, len(r)), np.float32),
                            sigma=np.ones(len(r), np.float32)))
    ray, step, slots = merge(objs, 40)
    # each object's samples land on their own (ray, step)
    for s, slot in zip(objs, slots, strict=True):
        assert np.array_equal(ray[slot], s.ray) and np.array_equal(step[slot], s.step)
    # the union, each key once; each ray contiguous and ordered by step
    keys = set(zip(ray.tolist(), step.tolist(), strict=True))
    assert len(keys) == len(ray) == len(set().union(*[set(zip(s.ray.tolist(), s.step.tolist(), strict=True))
                                                       for s in objs]))
    starts = np.flatnonzero(np.r_[True, ray[1:] != ray[:-1]])
    assert len(starts) == len(np.unique(ray))  # contiguous
    for a, b in zip(starts, np.r_[starts[1:], len(ray)], strict=True):
        assert np.all(np.diff(step[a:b]) > 0)


def test_box_interval_matches_points_inside_the_cube():
    placed = constant_placed(0.9, (0.2, -0.1, 0.3), 0.4)
    g = np.random.default_rng(0)
    o = g.uniform(-2, 2, (200, 3))
    d = g.normal(size=(200, 3))
    o3, d3 = rays(o, d)
    t0, t1 = box_interval(placed, o3, d3)
    ts = np.linspace(0.0, 8.0, 4001)
    for i in range(200):
        p = o3[:, i][None, :] + ts[:, None] * d3[:, i][None, :]
        inside = np.all(np.abs(p - [0.2, -0.1, 0.3]) <= 0.4, axis=1)
        if inside.any():
            assert t1[i] > t0[i]
            assert ts[inside].min() == pytest.approx(t0[i], abs=2e-3)
            assert ts[inside].max() == pytest.approx(t1[i], abs=2e-3)
        else:
            assert t1[i] <= t0[i] + 2e-3


def test_skipping_changes_nothing_against_marching_every_step():
    # naive reference: every fine step inside the cube sampled, no coarse skipping or cut-off
    from genfield.render.analytic import AnalyticModel, demo_shapes

    model = AnalyticModel(demo_shapes())
    placed = [Placed.make(prepare(model.bake(model.shape_code(i), model.appearance_code(i), 33)),
                          Pose.from_ypr((0.25 * i, 0.1 * i, 0.0), 0.3 * i, 0.2, 0.1, 0.3))
              for i in range(3)]
    g = np.random.default_rng(1)
    target = g.uniform(-0.2, 0.7, (3000, 3))
    origin = np.array([-1.5, -1.2, 0.8])
    o3, d3 = rays(np.broadcast_to(origin, target.shape), target - origin)
    t_max = np.full(3000, np.inf)
    fast, delta = march_all(placed, o3, d3, t_max, step=0.5)
    brute = []
    for p in placed:
        t0, t1 = box_interval(p, o3, d3)
        ids = np.flatnonzero((t1 > t0) & np.isfinite(delta))
        j0 = np.ceil(t0[ids] / delta[ids]).astype(np.int64)
        j1 = np.floor(t1[ids] / delta[ids]).astype(np.int64)
        n = np.maximum(j1 - j0 + 1, 0)
        ray = np.repeat(ids, n)
        j = np.concatenate([np.arange(a, b + 1) for a, b in zip(j0, j1, strict=True)])
        m = p.to_object
        pts = (m[:, :3] @ (o3[:, ray] + j * delta[ray] * d3[:, ray]) + m[:, 3:]).astype(np.float32)
        sig = reconstruct(sample(p.grid.density, pts)[:, 0]) / p.scale
        keep = sig > 0
        brute.append(Samples(ray=ray[keep], step=j[keep], points=pts[:, keep], sigma=sig[keep]))
    a, b = composite(fast, delta, 3000), composite(brute, delta, 3000)
    assert sum(len(s.ray) for s in fast) < 0.5 * sum(len(s.ray) for s in brute)  # it does skip
    # equal up to float32 rounding of the sample points (the marcher works in the object frame)
    assert np.allclose(a.alpha, b.alpha, atol=1e-3)
    assert np.allclose(a.shares, b.shares, atol=1e-3)
    assert np.allclose(a.alone, b.alone, atol=1e-3)
    finite = np.isfinite(b.t_surface)
    assert np.array_equal(np.isfinite(a.t_surface), finite)
    assert np.allclose(a.t_surface[finite], b.t_surface[finite], atol=1e-5)


def test_a_shared_read_only_density_is_prepared_once_and_a_writeable_one_every_time():
    # a model hands out one read-only density array per shape: its gradient and cell states
    # are reused, while the albedo of each grid is its own; a writeable array is never reused
    from genfield.render.grids import _SHARED

    r = 9
    pts = grid_points(r)
    density = (SIGMA_MAX * (np.linalg.norm(pts, axis=-1) < 0.6)).astype(np.float32)
    density.flags.writeable = False
    red, blue = np.zeros((r, r, r, 3), np.float32), np.zeros((r, r, r, 3), np.float32)
    red[..., 0], blue[..., 2] = 0.8, 0.8
    a, b = prepare(FieldGrid(density, red)), prepare(FieldGrid(density, blue))
    assert a.density is b.density and id(density) in _SHARED
    assert torch.equal(a.features[:, 3:], b.features[:, 3:])  # the same gradient
    assert a.features[0, 0].max() == pytest.approx(0.8) and b.features[0, 0].max() == 0.0
    fresh = prepare(FieldGrid(density.copy(), red))  # writeable: prepared from scratch
    assert fresh.density is not a.density and torch.equal(fresh.density, a.density)
    key = id(density)
    del a, b, density
    assert key not in _SHARED  # the entry goes with the array
