"""Ground-truth samples: layout, fractions, agreement with the asset, and the cache."""

from __future__ import annotations

import numpy as np
import pytest

from genfield.assets import ground_truth as gt_module
from genfield.assets import make_builtin, sample_ground_truth, sample_ground_truths
from genfield.colour import srgb_to_linear


@pytest.fixture(autouse=True)
def _own_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("GENFIELD_CACHE", str(tmp_path / "cache"))


def test_layout_dtypes_and_agreement_with_the_asset():
    a = make_builtin("cup", 0)
    gt = sample_ground_truth(a, 8000, seed=1, cache=False)
    assert gt.points.shape == (8000, 3) and gt.points.dtype == np.float32
    assert gt.occupancy.shape == (8000,) and gt.occupancy.dtype == np.float32
    assert gt.surface_points.shape == (2000, 3) and gt.surface_colour.dtype == np.float32
    assert (np.abs(gt.points) <= 1).all()
    assert np.array_equal(gt.occupancy, a.occupancy(gt.points))
    assert np.abs(a.sdf(gt.surface_points)).max() < 1e-6  # float32 rounding of exact points
    expected = srgb_to_linear(a.colour_srgb(gt.surface_points))  # linear, not sRGB
    assert np.allclose(gt.surface_colour, expected, atol=1e-6)
    assert gt.meta["asset"] == "cup-0000" and gt.meta["count"] == 8000


def test_fractions_of_uniform_and_near_surface_points():
    a = make_builtin("bottle", 1)
    gt = sample_ground_truth(a, 40_000, seed=0, cache=False)
    d = np.abs(a.sdf(gt.points))
    # near-surface points sit within a few sigma (largest 0.06) of the surface; uniform ones
    # mostly far from this slim bottle: the share beyond 0.3 comes from the uniform quarter.
    far = np.mean(d > 0.3)
    uniform_far = np.mean(np.abs(a.sdf(np.random.default_rng(0).uniform(-1, 1, (40_000, 3)))) > 0.3)
    assert far == pytest.approx(gt_module.UNIFORM_FRACTION * uniform_far, abs=0.01)
    assert np.mean(d < 0.01) > 0.25  # the finest scale (0.005) and part of the next
    # shuffled: the first half holds the same mixture as the whole
    assert np.mean(d[:20_000] > 0.3) == pytest.approx(far, abs=0.01)


def test_occupancy_share_is_the_mixture_of_volume_and_half_of_the_near_points():
    # E[occupancy] = U * volume / 8 + (1 - U) * ~1/2: symmetric offsets around a surface land
    # inside half the time (up to curvature terms of order sigma / radius).
    a = make_builtin("hex_nut", 0)
    gt = sample_ground_truth(a, 40_000, seed=2, cache=False)
    volume = 8 * a.occupancy(np.random.default_rng(5).uniform(-1, 1, (200_000, 3))).mean()
    u = gt_module.UNIFORM_FRACTION
    assert gt.occupancy.mean() == pytest.approx(u * volume / 8 + (1 - u) * 0.5, abs=0.03)


def test_cache_round_trip_and_keys(tmp_path):
    a = make_builtin("washer", 2)
    first = sample_ground_truth(a, 4000, seed=3)
    path = gt_module.cache_path(a, 4000, 3)
    assert path.exists() and path.parent.name == "ground-truth"
    with np.load(path, allow_pickle=False) as z:  # plain arrays only
        assert set(z.files) == {"samples", "surface", "meta"}
        assert z["samples"].dtype == np.float32 and z["samples"].shape == (4000, 4)
    again = sample_ground_truth(a, 4000, seed=3)
    for name in ("points", "occupancy", "surface_points", "surface_colour"):
        assert np.array_equal(getattr(first, name), getattr(again, name))
    assert again.meta == first.meta
    assert gt_module.cache_path(a, 4000, 4) != path
    assert gt_module.cache_path(a, 4001, 3) != path
    assert gt_module.cache_path(make_builtin("washer", 3), 4000, 3) != path


def test_corrupt_cache_entry_is_recomputed():
    a = make_builtin("bushing", 0)
    path = gt_module.cache_path(a, 2000, 0)
    path.write_bytes(b"not an npz")
    gt = sample_ground_truth(a, 2000, seed=0)
    assert gt.points.shape == (2000, 3)
    with np.load(path, allow_pickle=False) as z:
        assert z["samples"].shape == (2000, 4)


def test_pool_and_sequential_give_the_same_samples():
    assets = [make_builtin("washer", i) for i in range(3)]
    pooled = sample_ground_truths(assets, 2000, seed=1, processes=2)
    direct = [sample_ground_truth(a, 2000, seed=1, cache=False) for a in assets]
    for p, d in zip(pooled, direct, strict=True):
        assert np.array_equal(p.points, d.points) and np.array_equal(p.occupancy, d.occupancy)
