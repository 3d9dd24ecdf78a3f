"""Light and what lies behind the objects: Lambert shading, the backdrop and the floor.

Lambert's cosine law with an ambient term (Lambert 1760; the usual form in Foley, van Dam
et al., "Computer Graphics", ch. 16): radiance = albedo * (ambient + strength * max(0, n.l) * V),
with l the unit direction towards the light and V in [0, 1] the light's transmittance along
the shadow ray (1 without shadows). Each visible sample is shaded with the normal of the
summed density, n = -grad(sigma) / |grad(sigma)| (density grows inwards), and the shaded
samples are composited with their volume-rendering weights; the shadow factor V is taken
once per pixel at its first surface.
"""

from __future__ import annotations

import numpy as np

from genfield.colour import srgb_to_linear
from genfield.errors import UsageError
from genfield.render.composite import Merged
from genfield.render.grids import sample
from genfield.render.march import Placed, Samples
from genfield.scene import Backdrop, Light

# Samples carrying less of the pixel than this are not shaded (their colour is not looked up):
# at most ~a few such samples a ray, so the colour they would add is below 1e-3.
SHADE_MIN_WEIGHT = 1e-4


def light_direction(light: Light) -> np.ndarray:
    """The unit vector (3,) towards the light; a UsageError for a zero or non-finite one."""
    a = np.asarray(light.direction, dtype=np.float64)
    n = np.linalg.norm(a)
    if not np.isfinite(n) or n == 0.0:
        raise UsageError(f"the light direction must be a non-zero vector, got {tuple(light.direction)}",
                         where="Scene.light.direction")
    return a / n


def backdrop_image(backdrop: Backdrop, height: int, width: int) -> np.ndarray:
    """(H, W, 3) linear RGB vertical gradient, top row to bottom row.

    At row centre f = (row + 0.5) / H the sRGB ends are blended, (1 - f) top + f bottom, and
    the blend is decoded to linear (IEC 61966-2-1): a gradient even to the eye, and the rule
    of the reference tracer (``genfield.render.reference``).
    """
    f = ((np.arange(height) + 0.5) / height)[:, None]  # (H, 1)
    srgb = (1.0 - f) * np.asarray(backdrop.top_srgb)[None, :] + f * np.asarray(backdrop.bottom_srgb)[None, :]
    return np.broadcast_to(srgb_to_linear(srgb)[:, None, :], (height, width, 3))


def floor_distance(origins: np.ndarray, directions: np.ndarray) -> np.ndarray:
    """(N,) ray distance to the plane z = 0, inf where the ray runs parallel or away.

    Ray-plane intersection: o_z + t d_z = 0, t = -o_z / d_z, a hit when t > 0.
    """
    dz = directions[:, 2]
    with np.errstate(divide="ignore", invalid="ignore"):
        t = -origins[:, 2] / dz
    return np.where(np.isfinite(t) & (t > 0.0), t, np.inf)


def per_ray(ray: np.ndarray, values: np.ndarray, n_rays: int) -> np.ndarray:
    """(n_rays, 3) sums of (m, 3) ``values`` by ray, one bincount for all three channels."""
    flat = (ray[:, None] * 3 + np.arange(3)).ravel()
    return np.bincount(flat, values.ravel(), minlength=3 * n_rays).reshape(n_rays, 3)


def surface_terms(merged: Merged, samples: list[Samples], placed: list[Placed], light: np.ndarray,
                  n_rays: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per ray: sum w a (N, 3), sum w a max(0, n.l) (N, 3) and sum w n (N, 3), world frame.

    a is the density-weighted mean albedo at a sample, n the unit normal of the summed
    density there; only samples with w >= SHADE_MIN_WEIGHT are looked up.
    """
    shaded = merged.weight >= SHADE_MIN_WEIGHT  # (U,)
    idx = np.flatnonzero(shaded)
    where = np.cumsum(shaded) - 1  # shared slot -> row of the shaded ones
    albedo_sum = np.zeros((len(idx), 3))  # sum_k sigma_k a_k per shaded sample
    gradient = np.zeros((len(idx), 3))  # sum_k grad sigma_k, world, per metre^2
    for s, slot, p in zip(samples, merged.slots, placed, strict=True):
        pick = np.flatnonzero(shaded.take(slot))
        if len(pick) == 0:
            continue
        rows = where.take(slot.take(pick))  # distinct: an object has one sample a slot
        f = sample(p.grid.features, s.points.take(pick, axis=1))  # (m, 6): albedo, gradient
        albedo_sum[rows] += s.sigma.take(pick)[:, None] * f[:, :3]
        # sigma_world(x) = sigma_obj(A x + b) / s with A = R^T / s: grad_world = R grad_obj / s^2
        gradient[rows] += f[:, 3:] @ (p.rotation.T / p.scale**2)
    ray, w = merged.ray.take(idx), merged.weight.take(idx)
    albedo = albedo_sum / merged.sigma.take(idx)[:, None]  # density-weighted mean
    length = np.sqrt(np.einsum("ij,ij->i", gradient, gradient))[:, None]
    normal = -gradient / np.maximum(length, 1e-30)  # 0 where the gradient vanishes
    cosine = np.maximum(normal @ light, 0.0)  # (m,)
    wa = w[:, None] * albedo
    return (per_ray(ray, wa, n_rays), per_ray(ray, cosine[:, None] * wa, n_rays),
            per_ray(ray, w[:, None] * normal, n_rays))
