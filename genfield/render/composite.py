"""Composition of several objects along rays and standard volume rendering.

Composition (our DESIGN.md): at a point the densities of the objects add,
sigma = sum_k sigma_k, and features are the density-weighted mean,
f = sum_k sigma_k f_k / sigma. Volume rendering by quadrature (Max 1995, "Optical models for
direct volume rendering"; NeRF eq. 3, Mildenhall et al. 2020), midpoint rule, each sample i
standing for the interval [t_i - delta / 2, t_i + delta / 2]:

    alpha_i = 1 - exp(-sigma_i delta)
    T_i     = exp(-sum_{j < i} sigma_j delta)          transmittance up to the interval
    w_i     = T_i alpha_i                               the sample's share of the pixel

Object k's share of the pixel is sum_i w_i sigma_k,i / sigma_i (these sum to the pixel's
alpha); object k alone has alpha 1 - exp(-sum_i sigma_k,i delta) (Beer-Lambert).

Depth rule: the first-surface distance is where the transmittance crosses 1/2, i.e. where
the optical depth reaches ln 2, found inside the crossing interval from its constant density
(exact for the piecewise-constant quadrature). It exists exactly when alpha >= 1/2, which is
also the mask rule (``genfield.render.output.MASK_ALPHA``), so depth and masks agree.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from genfield.render.march import Samples

LN2 = math.log(2.0)


@dataclass(frozen=True)
class Merged:
    """All objects' samples on one shared list per ray, composited.

    ray, step: (U,) int64, sorted by ray then step; sigma: (U,) float64 total density per
    metre; weight: (U,) float64 w_i; slots: per object (n_k,) int64 positions of its samples
    in the shared list. alpha: (N,) per ray; t_surface: (N,) ray distance of the first
    surface (inf: alpha < 1/2); shares: (K, N) each object's share of each ray's weight;
    alone: (K, N) each object's alpha as if alone.
    """

    ray: np.ndarray
    step: np.ndarray
    sigma: np.ndarray
    weight: np.ndarray
    slots: list[np.ndarray]
    alpha: np.ndarray
    t_surface: np.ndarray
    shares: np.ndarray
    alone: np.ndarray


def _distinct(sorted_values: np.ndarray) -> np.ndarray:
    """The distinct values of a sorted array, in order (np.unique without its sort)."""
    if len(sorted_values) == 0:
        return sorted_values
    return sorted_values[np.r_[True, sorted_values[1:] != sorted_values[:-1]]]


def merge(samples: list[Samples], n_rays: int) -> tuple[np.ndarray, np.ndarray, list[np.ndarray]]:
    """One shared list of all objects' samples, grouped by ray and ordered by step within a ray.

    Returns ray (U,), step (U,) and, per object, the positions (n_k,) of its samples in the
    list. Steps are shared integers, so merging is a union of (ray, step) keys. Rays met by
    one object keep that object's order as it is (no sorting at all); only the keys of rays
    met by several objects are sorted together. Rays need not be in order, only contiguous.
    """
    span = 1 + max((int(s.step.max()) for s in samples if len(s.step)), default=0)
    keys = [s.ray * span + s.step for s in samples]  # (n_k,) int64, sorted within an object
    owners = np.zeros(n_rays, np.int64)
    for s in samples:
        owners[_distinct(s.ray)] += 1
    shared = [owners[s.ray] > 1 for s in samples]  # (n_k,) bool each
    both = np.unique(np.concatenate([k[m] for k, m in zip(keys, shared, strict=True)] or [np.zeros(0, np.int64)]))
    pieces, slots, offset = [], [], 0
    for k, m in zip(keys, shared, strict=True):
        single = k[~m]
        slot = np.empty(len(k), np.int64)
        slot[~m] = offset + np.arange(len(single))
        pieces.append(single)
        offset += len(single)
        slots.append(slot)
    for k, m, slot in zip(keys, shared, slots, strict=True):
        slot[m] = offset + np.searchsorted(both, k[m])
    union = np.concatenate([*pieces, both])
    return union // span, union % span, slots


def composite(samples: list[Samples], delta: np.ndarray, n_rays: int) -> Merged:
    """Merge the objects' samples and volume-render them (module doc), per ray."""
    ray, step, slots = merge(samples, n_rays)
    k_objects = len(samples)
    sigma = np.zeros(len(ray))
    for s, slot in zip(samples, slots, strict=True):
        sigma[slot] += s.sigma  # densities add (each object's slots are distinct)
    dl = delta[ray]  # (U,)
    tau = sigma * dl  # optical depth of each interval
    total = np.cumsum(tau)
    new = np.empty(len(ray), bool)
    new[:1], new[1:] = True, ray[1:] != ray[:-1]  # first sample of each ray
    lead = np.flatnonzero(new)
    seg = np.cumsum(new) - 1
    before = total - tau - (total[lead] - tau[lead])[seg]  # optical depth before each interval
    weight = np.exp(-before) * -np.expm1(-tau)  # w_i = T_i alpha_i
    alpha = np.bincount(ray, weight, minlength=n_rays)

    t_surface = np.full(n_rays, np.inf)
    cross = (before < LN2) & (before + tau >= LN2)
    tc = (step[cross] - 0.5) * dl[cross] + (LN2 - before[cross]) / sigma[cross]
    t_surface[ray[cross]] = tc

    shares = np.zeros((k_objects, n_rays))
    alone = np.zeros((k_objects, n_rays))
    for k, (s, slot) in enumerate(zip(samples, slots, strict=True)):
        shares[k] = np.bincount(s.ray, weight[slot] * s.sigma / sigma[slot], minlength=n_rays)
        alone[k] = -np.expm1(-np.bincount(s.ray, s.sigma * delta[s.ray], minlength=n_rays))
    return Merged(ray=ray, step=step, sigma=sigma, weight=weight, slots=slots, alpha=alpha,
                  t_surface=t_surface, shares=shares, alone=alone)
