"""Each asset's leading colour wave: the peak of its colour's spectrum over its surface.

Painted patterns are mostly periodic along some direction (bands) or a step along one (a
two-tone split). A colour head left to find such a wave by gradient descent finds it slowly
or not at all: a wave of the wrong frequency drifts out of phase across the object, so the
loss hardly tells which way the right frequency lies. So the training starts each asset's own
wave (the first entries of its appearance code, ``genfield.field.network``) at the peak of the
periodogram of its surface colour, and lets the optimiser refine it from there.

The periodogram is the squared magnitude of the Fourier transform of the colour along its
principal axis (the direction in RGB in which it varies most), splatted onto a grid over the
object cube and zero-padded (numpy.fft.rfftn); the peak is then refined on the samples
themselves with the exact sum  F(k) = sum_n y_n exp(-i k . x_n)  (a non-uniform DFT), and the
phase is the angle of F there, so that  y ~ A cos(k . x + phase).
"""

from __future__ import annotations

import numpy as np

WAVE_ENTRIES = 4  # (k_x, k_y, k_z) in radians per object unit, then the phase in radians


def leading_wave(points: np.ndarray, colour: np.ndarray, *, bins: int = 64, pad: int = 2,
                 lowest: float = 0.5, refine_samples: int = 8192) -> np.ndarray:
    """The strongest plane wave of a colour over surface points, as (k_x, k_y, k_z, phase).

    points: (N, 3) in the object cube [-1, 1]^3; colour: (N, 3). ``lowest`` (cycles per unit)
    keeps the peak off the slow variations that the object's own shape leaves in the
    spectrum. A colour that does not vary gives zeros.
    """
    p = np.asarray(points, np.float64).reshape(-1, 3)
    c = np.asarray(colour, np.float64).reshape(-1, 3)
    c = c - c.mean(0)
    values, vectors = np.linalg.eigh(c.T @ c)  # principal axis of the colour, in RGB
    if len(p) < 2 or values[-1] <= 1e-12 * len(p):
        return np.zeros(WAVE_ENTRIES, np.float32)
    y = c @ vectors[:, -1]  # (N,)

    cell = np.clip(((p + 1.0) * (bins / 2.0)).astype(np.int64), 0, bins - 1)  # (N, 3)
    flat = np.ravel_multi_index(cell.T, (bins,) * 3)
    grid = np.bincount(flat, weights=y, minlength=bins**3).reshape((bins,) * 3)
    n = bins * pad
    power = np.abs(np.fft.rfftn(grid, s=(n,) * 3, axes=(0, 1, 2))) ** 2  # (n, n, n // 2 + 1)
    spacing = 2.0 / bins  # object units per bin
    fx = np.fft.fftfreq(n, spacing)  # cycles per unit
    fz = np.fft.rfftfreq(n, spacing)
    norm = np.sqrt(fx[:, None, None] ** 2 + fx[None, :, None] ** 2 + fz[None, None, :] ** 2)
    power[norm < lowest] = 0.0
    i, j, k = np.unravel_index(int(np.argmax(power)), power.shape)
    f = np.array([fx[i], fx[j], fz[k]])

    sub = np.random.default_rng(0).permutation(len(p))[:refine_samples]
    ps, ys = p[sub], y[sub]

    def strength(freqs: np.ndarray) -> np.ndarray:  # |F| at (m, 3) frequencies, cycles/unit
        return np.abs(np.exp(-2j * np.pi * (ps @ freqs.T)).T @ ys)

    offsets = np.stack(np.meshgrid(*[np.arange(-1, 2)] * 3, indexing="ij"), -1).reshape(-1, 3)
    step = 1.0 / (n * spacing)  # the padded transform's frequency spacing
    for _ in range(5):  # hill-climb on the exact sum, halving the step each round
        step /= 2.0
        candidates = f + step * offsets
        f = candidates[int(np.argmax(strength(candidates)))]
    k = 2.0 * np.pi * f
    phase = float(np.angle(np.exp(-1j * (ps @ k)) @ ys))
    return np.array([*k, phase], np.float32)


def leading_waves(points: np.ndarray, colour: np.ndarray) -> np.ndarray:
    """``leading_wave`` of every asset: (A, N, 3), (A, N, 3) -> (A, 4) float32."""
    return np.stack([leading_wave(p, c) for p, c in zip(points, colour, strict=True)])
