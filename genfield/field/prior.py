"""The prior over joint (shape, appearance) codes, and whether its samples are usable shapes.

Fitting: one Gaussian per family (a mixture weighted by asset counts) or one over all codes.
Each covariance is the Ledoit-Wolf shrinkage estimate (Ledoit and Wolf 2004, "A
well-conditioned estimator for large-dimensional covariance matrices", J. Multivariate
Analysis 88, eq. 14 and Lemmas 3.2-3.4): with n codes in d dimensions, n is often below d,
so the sample covariance S is singular; S* = a m I + (1 - a) S with m = tr(S) / d and the
shrinkage a = min(b^2, d^2) / d^2 estimated from the data. A family with fewer than three
codes borrows the pooled within-family covariance (``_fallback``).

Validity of a sample (issue 5): after removing floating parts below a volume fraction
(``genfield.field.bake.clean_occupancy``), the shape is non-empty, is one part, and keeps
clear of the cube's faces (it is not cut off by the object cube).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from genfield.field.codebook import CodeBook

CODE_INIT_STD = 0.01  # DeepSDF (Park et al. 2019) initialises codes from N(0, 0.01^2)
MIN_SOLID_POINTS = 8  # fewer solid grid points than this is an empty sample
MAX_FACE_FRACTION = 0.01  # share of the cube's outer grid faces a sample may touch


def ledoit_wolf(x: np.ndarray) -> tuple[np.ndarray, float]:
    """Shrunk covariance (d, d) of samples (n, d) and the shrinkage a in [0, 1]."""
    n, d = x.shape
    xc = x - x.mean(axis=0)
    s = xc.T @ xc / n  # (d, d) maximum-likelihood sample covariance
    m = np.trace(s) / d
    # squared norms in the paper's normalised Frobenius norm, |A|^2 = tr(A A^T) / d
    d2 = np.sum((s - m * np.eye(d)) ** 2) / d
    if d2 <= 0.0:
        return s, 0.0
    outer = np.einsum("ni,nj->nij", xc, xc)  # (n, d, d)
    b2_bar = np.sum((outer - s[None]) ** 2) / d / n**2
    a = float(min(b2_bar, d2) / d2)
    return a * m * np.eye(d) + (1.0 - a) * s, a


def _fallback(joint: np.ndarray, families: list[str]) -> np.ndarray:
    """The covariance for a family too small for its own: the pooled within-family one, else
    that of all codes, else an isotropic one at the codes' initial spread."""
    groups = [joint[[f == fam for f in families]] for fam in sorted(set(families))]
    centred = np.concatenate([g - g.mean(axis=0) for g in groups])
    for x in (centred, joint - joint.mean(axis=0)):
        if len(x) > 1 and np.trace(x.T @ x) > 0.0:
            return ledoit_wolf(x)[0]
    return np.eye(joint.shape[1]) * CODE_INIT_STD**2


def fit_prior(shape: np.ndarray, appearance: np.ndarray, families: list[str],
              per_family: bool) -> tuple[np.ndarray, np.ndarray, np.ndarray, dict]:
    """Mixture weights (C,), means (C, D), Cholesky factors (C, D, D) and a JSON description."""
    joint = np.concatenate([shape, appearance], axis=1).astype(np.float64)  # (n, D)
    d = joint.shape[1]
    groups = sorted(set(families)) if per_family else ["all"]
    weights, means, chols, parts = [], [], [], []
    pooled = None
    for fam in groups:
        x = joint if fam == "all" else joint[[f == fam for f in families]]
        if len(x) >= 3:
            cov, a = ledoit_wolf(x)
        else:
            pooled = _fallback(joint, families) if pooled is None else pooled
            cov, a = pooled, float("nan")
        cov = cov + (1e-9 * np.trace(cov) / d + 1e-12) * np.eye(d)  # a real Cholesky factor
        weights.append(len(x))
        means.append(x.mean(axis=0))
        chols.append(np.linalg.cholesky(cov))
        parts.append({"family": fam, "codes": len(x),
                      "shrinkage": None if np.isnan(a) else round(a, 6)})
    w = np.asarray(weights, np.float64)
    info = {"kind": "per-family Gaussian mixture" if per_family else "Gaussian",
            "covariance": "Ledoit-Wolf shrinkage", "components": parts}
    return w / w.sum(), np.stack(means), np.stack(chols), info


def with_prior(book: CodeBook, per_family: bool) -> tuple[CodeBook, dict]:
    """The same code table with a prior fitted to its codes."""
    weights, means, chols, info = fit_prior(book.shape, book.appearance, list(book.families),
                                            per_family)
    return CodeBook(names=book.names, families=book.families, shape=book.shape,
                    appearance=book.appearance, prior_weights=weights, prior_means=means,
                    prior_chols=chols), info


@dataclass(frozen=True)
class Validity:
    """What the validity test found for one cleaned occupancy grid."""

    solid_points: int  # grid points with occupancy > 0.5 after cleanup
    parts: int  # connected parts left after cleanup
    face_fraction: float  # share of the cube's outer grid points that are solid

    @property
    def valid(self) -> bool:
        return (self.solid_points >= MIN_SOLID_POINTS and self.parts == 1
                and self.face_fraction <= MAX_FACE_FRACTION)


def validity(occupancy: np.ndarray, parts: int) -> Validity:
    """Judge a cleaned occupancy grid (R, R, R) with ``parts`` connected parts."""
    solid = occupancy > 0.5
    faces = np.concatenate([solid[[0, -1]].ravel(), solid[:, [0, -1]].ravel(),
                            solid[:, :, [0, -1]].ravel()])
    return Validity(int(solid.sum()), int(parts), float(faces.mean()))
