"""The leading colour wave: planted plane waves and square waves are found again."""

from __future__ import annotations

import math

import numpy as np
import pytest

from genfield.field.spectrum import leading_wave, leading_waves


def _sphere(n: int, radius: float, seed: int) -> np.ndarray:
    x = np.random.default_rng(seed).normal(size=(n, 3))
    return radius * x / np.linalg.norm(x, axis=1, keepdims=True)


def _same_wave(found: np.ndarray, k: np.ndarray, phase: float) -> tuple[float, float]:
    """Distance of the found wave vector to k or -k (a wave and its mirror are one), and the
    phase difference for that sign, wrapped to [0, pi]."""
    sign = 1.0 if np.linalg.norm(found[:3] - k) <= np.linalg.norm(found[:3] + k) else -1.0
    dk = float(np.linalg.norm(found[:3] - sign * k))
    dp = abs((found[3] - sign * phase + math.pi) % (2 * math.pi) - math.pi)
    return dk, dp


@pytest.mark.parametrize("cycles", [[0.7, -0.4, 3.3], [2.0, 1.5, 0.0], [-4.5, 0.3, 2.2]])
def test_a_planted_cosine_is_found_with_its_phase(cycles):
    points = _sphere(20_000, 0.8, 0)
    k = 2 * math.pi * np.asarray(cycles)
    phase = 1.1
    y = np.cos(points @ k + phase)  # y = cos(k . x + phase): the convention of leading_wave
    colour = 0.5 + 0.2 * y[:, None] * np.array([1.0, 0.6, -0.3])
    found = leading_wave(points, colour)
    dk, dp = _same_wave(found, k, phase)
    assert dk < 0.02 * np.linalg.norm(k)
    assert dp < 0.05


def test_a_square_wave_is_found_at_its_fundamental():
    # a square wave's Fourier series has its strongest term at the fundamental frequency
    # (Fourier series of a rectangular pulse train: amplitude of harmonic n ~ sin(pi n D) / n)
    points = _sphere(20_000, 0.8, 1)
    k = 2 * math.pi * np.array([0.5, 0.2, 2.8])
    second = np.cos(points @ k) > 0.4  # duty about 0.37
    colour = np.where(second[:, None], [0.7, 0.1, 0.1], [0.1, 0.2, 0.6])
    dk, _ = _same_wave(leading_wave(points, colour), k, 0.0)
    assert dk < 0.03 * np.linalg.norm(k)


def test_a_plain_colour_has_no_wave_and_batches_stack():
    points = _sphere(2000, 0.5, 2)
    plain = np.full((2000, 3), 0.4)
    assert np.array_equal(leading_wave(points, plain), np.zeros(4, np.float32))
    waves = leading_waves(np.stack([points, points]), np.stack([plain, plain]))
    assert waves.shape == (2, 4) and waves.dtype == np.float32
