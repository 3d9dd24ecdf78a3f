"""The prior (Ledoit-Wolf shrinkage, per-family mixture), sample validity, and the generative
scores (Coverage, MMD, 1-NNA)."""

from __future__ import annotations

import numpy as np
import pytest

from genfield.field.codebook import CodeBook
from genfield.field.genmetrics import generative_scores, scores_from_distances
from genfield.field.grid import grid_points
from genfield.field.prior import _ledoit_wolf_identity, fit_prior, ledoit_wolf, validity, with_prior


def _ledoit_wolf_shrinkage_reference(x: np.ndarray) -> float:
    """The shrinkage as scikit-learn's ``ledoit_wolf_shrinkage`` computes it (its algebra,
    written from memory of sklearn/covariance/_shrunk_covariance.py): a second derivation of
    Ledoit and Wolf (2004) through sums of squared entries rather than outer products."""
    n, p = x.shape
    x = x - x.mean(axis=0)
    x2 = x**2
    emp_cov_trace = np.sum(x2, axis=0) / n
    mu = np.sum(emp_cov_trace) / p
    beta_ = np.sum(x2.T @ x2)
    delta_ = np.sum((x.T @ x) ** 2) / n**2
    beta = 1.0 / (p * n) * (beta_ / n - delta_)
    delta = (delta_ - 2.0 * mu * emp_cov_trace.sum() + p * mu**2) / p
    beta = min(beta, delta)
    return 0.0 if beta == 0 else beta / delta


@pytest.mark.parametrize("n, d", [(8, 48), (30, 5), (200, 3)])
def test_ledoit_wolf_agrees_with_the_sklearn_algebra(n, d):
    g = np.random.default_rng(n)
    x = g.normal(size=(n, d)) @ g.normal(size=(d, d)) * 0.1
    cov, a = _ledoit_wolf_identity(x)
    assert a == pytest.approx(_ledoit_wolf_shrinkage_reference(x), rel=1e-9, abs=1e-12)
    s = np.cov(x, rowvar=False, bias=True)
    m = np.trace(s) / d
    assert np.allclose(cov, a * m * np.eye(d) + (1 - a) * s)
    assert np.all(np.linalg.eigvalsh(cov) > 0)  # well conditioned even when n < d


def test_ledoit_wolf_keeps_each_entry_s_own_variance_and_scales_with_it():
    # the diagonal target (Schaefer and Strimmer 2005, target D): the shrunk diagonal is the
    # sample variance, and rescaling entries rescales the estimate the same way
    g = np.random.default_rng(3)
    x = g.normal(size=(8, 12)) @ g.normal(size=(12, 12))
    scale = np.r_[np.full(4, 40.0), np.full(8, 0.1)]  # radians beside small code entries
    cov, a = ledoit_wolf(x * scale)
    assert 0.0 < a < 1.0
    assert np.allclose(np.diag(cov), (x * scale).var(axis=0))
    assert np.allclose(cov, ledoit_wolf(x)[0] * np.outer(scale, scale))


def test_shrinkage_falls_as_samples_grow():
    g = np.random.default_rng(0)
    a_small = ledoit_wolf(g.normal(size=(10, 20)))[1]
    mixing = g.normal(size=(20, 20))  # correlated entries: the diagonal target is far off
    a_large = ledoit_wolf(g.normal(size=(5000, 20)) @ mixing)[1]
    assert a_small > 0.3 and a_large < 0.05


def test_per_family_mixture_has_one_component_per_family():
    g = np.random.default_rng(1)
    shape = np.concatenate([g.normal(-2, 0.1, (6, 4)), g.normal(3, 0.1, (4, 4))])
    appearance = g.normal(size=(10, 2))
    families = ["a"] * 6 + ["b"] * 4
    w, means, chols, info = fit_prior(shape, appearance, families, "family")
    assert np.allclose(w, [0.6, 0.4])
    assert np.allclose(means[0, :4], shape[:6].mean(0)) and np.allclose(means[1, :4], shape[6:].mean(0))
    assert [c["family"] for c in info["components"]] == ["a", "b"]
    covs = chols @ np.transpose(chols, (0, 2, 1))
    family_a = ledoit_wolf(np.concatenate([shape, appearance], 1)[:6])[0]
    assert np.allclose(covs[0], family_a, atol=1e-8)
    w1, means1, _, _ = fit_prior(shape, appearance, families, "single")
    assert w1.shape == (1,) and np.allclose(means1[0, :4], shape.mean(0))
    # kernel: a component on every code, its family's covariance times bandwidth^2
    wk, meansk, cholsk, infok = fit_prior(shape, appearance, families, "kernel", 0.3)
    assert np.allclose(wk, 0.1) and np.allclose(meansk, np.concatenate([shape, appearance], 1))
    assert np.allclose(cholsk[2] @ cholsk[2].T, 0.09 * family_a, atol=1e-8)
    assert [c["family"] for c in infok["components"]] == families and infok["bandwidth"] == 0.3


def test_draws_follow_the_fitted_gaussian():
    g = np.random.default_rng(2)
    shape = g.normal(size=(40, 3)) * [1.0, 0.5, 0.2] + 1.0
    book = CodeBook(tuple(f"c{i}" for i in range(40)), ("f",) * 40, shape,
                    g.normal(size=(40, 1)), np.ones(1), np.zeros((1, 4)), np.eye(4)[None])
    book, _ = with_prior(book, "family")
    draws = np.array([np.concatenate(book.sample_prior(g)) for _ in range(4000)])
    assert np.allclose(draws.mean(0), book.prior_means[0], atol=0.06)
    cov = book.prior_chols[0] @ book.prior_chols[0].T
    assert np.allclose(np.cov(draws, rowvar=False), cov, atol=0.06)
    cold = np.array([np.concatenate(book.sample_prior(g, temperature=0.5)) for _ in range(4000)])
    assert np.allclose(np.cov(cold, rowvar=False), 0.25 * cov, atol=0.03)


def test_validity_of_simple_grids():
    p = grid_points(33)
    ball = (np.linalg.norm(p, axis=-1) < 0.5).astype(np.float32)
    assert validity(ball, 1).valid
    assert not validity(np.zeros_like(ball), 0).valid  # empty
    assert not validity(ball, 2).valid  # two parts
    slab = (np.abs(p[..., 2]) < 0.3).astype(np.float32)  # runs through the cube's side faces
    v = validity(slab, 1)
    assert v.face_fraction > 0.1 and not v.valid


def test_generative_scores_on_hand_made_distances():
    # two generated, three reference clouds; distances chosen so every answer is known:
    gen_ref = np.array([[0.1, 0.9, 0.8],
                        [0.2, 0.7, 0.9]])  # both nearest to reference 0: coverage 1/3
    gen_gen = np.array([[0.0, 0.05], [0.05, 0.0]])
    ref_ref = np.array([[0.0, 0.5, 0.6], [0.5, 0.0, 0.3], [0.6, 0.3, 0.0]])
    s = scores_from_distances(gen_ref, gen_gen, ref_ref)
    assert s.coverage == pytest.approx(1 / 3)
    assert s.mmd == pytest.approx((0.1 + 0.7 + 0.8) / 3)  # per reference, nearest generated
    # nearest neighbours: g0 -> g1, g1 -> g0 (right), r0 -> g0 (wrong), r1 -> r2, r2 -> r1
    assert s.nna == pytest.approx(4 / 5)


def test_identical_sets_score_perfect_coverage_and_chance_level_nna():
    g = np.random.default_rng(3)
    clouds = [g.normal(size=(64, 3)) * (1 + i) for i in range(4)]
    s = generative_scores([c.copy() for c in clouds], clouds)
    assert s.coverage == 1.0 and s.mmd == 0.0
    assert s.nna == 0.0  # each one's nearest is its twin in the other set
    far = generative_scores([c + 50.0 for c in clouds], clouds)
    assert far.nna == 1.0 and far.mmd > 40
