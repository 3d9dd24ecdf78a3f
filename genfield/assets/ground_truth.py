"""Ground truth for training and measuring: occupancy samples and coloured surface samples.

For an asset and ``count`` N:

- ``points`` (N, 3): UNIFORM_FRACTION of them uniform in the cube [-1, 1]^3, the rest near
  the surface: surface points (drawn with replacement from the M below) plus isotropic
  Gaussian offsets, in equal shares for each standard deviation in NOISE_SCALES (common
  practice since DeepSDF and Occupancy Networks: most samples where the decision is hard,
  some everywhere). Clipped to the cube and shuffled, so any prefix is a fair sample of the
  same mixture.
- ``occupancy`` (N,): the asset's inside test at those points, 0 or 1.
- ``surface_points`` (M, 3), M = SURFACE_FRACTION * N, uniform by area on the surface, and
  ``surface_colour`` (M, 3) there in *linear* RGB (the sources' sRGB through
  ``genfield.colour.srgb_to_linear``).

Cache: one ``.npz`` per asset under ``genfield.paths.cache_dir("ground-truth")``, read with
``allow_pickle=False``: float32 ``samples`` (N, 4) = points | occupancy, ``surface`` (M, 6) =
points | linear colour, and ``meta`` (JSON text). Its name is the sha256 of the asset's content
hash, N, the seed and every setting above (and SAMPLER_VERSION), so a changed source or setting
never reads a stale file. Randomness: ``rng(seed, 0, "ground-truth", <first 32 bits of the
content hash>)``, so the samples depend on what the asset is, not on its position in a list.
"""

from __future__ import annotations

import hashlib
import json
import logging
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from genfield.assets.asset import Asset
from genfield.colour import srgb_to_linear
from genfield.paths import cache_dir
from genfield.seeds import rng

log = logging.getLogger(__name__)

UNIFORM_FRACTION = 0.25  # of the N points, uniform in the cube
NOISE_SCALES = (0.005, 0.02, 0.06)  # object units; the other points split equally between them
SURFACE_FRACTION = 0.25  # M = round(SURFACE_FRACTION * N) coloured surface points
SAMPLER_VERSION = 2  # bump when the sampling changes: it keys the cache


@dataclass(frozen=True)
class GroundTruth:
    """One asset's samples (see the module docstring); ``meta`` says where they came from."""

    points: np.ndarray  # (N, 3) float32, object frame
    occupancy: np.ndarray  # (N,) float32 in {0, 1}
    surface_points: np.ndarray  # (M, 3) float32
    surface_colour: np.ndarray  # (M, 3) float32 linear RGB
    meta: dict[str, Any] = field(default_factory=dict)


def settings_key(asset: Asset, count: int, seed: int) -> str:
    """The cache key: sha256 of the source's content hash and every sampling setting."""
    record = {"content": asset.content_hash, "count": int(count), "seed": int(seed),
              "uniform": UNIFORM_FRACTION, "scales": list(NOISE_SCALES),
              "surface": SURFACE_FRACTION, "version": SAMPLER_VERSION}
    return hashlib.sha256(json.dumps(record, sort_keys=True).encode()).hexdigest()


def cache_path(asset: Asset, count: int, seed: int) -> Path:
    return cache_dir("ground-truth") / f"{settings_key(asset, count, seed)[:32]}.npz"


def compute_ground_truth(asset: Asset, count: int, seed: int) -> GroundTruth:
    """Draw the samples (no cache)."""
    if count < 4:
        raise ValueError(f"count must be at least 4, got {count}")
    g = rng(seed, 0, "ground-truth", int(asset.content_hash[:8], 16))
    n_uniform = round(count * UNIFORM_FRACTION)
    n_near = count - n_uniform
    m = max(1, round(count * SURFACE_FRACTION))
    surf, srgb = asset.geometry.surface(m, g)  # (m, 3) each
    scale = np.repeat(np.asarray(NOISE_SCALES), -(-n_near // len(NOISE_SCALES)))[:n_near]
    base = surf[g.integers(0, m, n_near)]  # (n_near, 3): the surface points, reused
    near = base + g.normal(size=(n_near, 3)) * scale[:, None]
    uniform = g.uniform(-1.0, 1.0, (n_uniform, 3))
    points = np.clip(np.concatenate([uniform, near]), -1.0, 1.0)[g.permutation(count)]
    meta = {"asset": asset.name, "source": asset.source, "content_hash": asset.content_hash,
            "count": int(count), "seed": int(seed), "uniform_fraction": UNIFORM_FRACTION,
            "noise_scales": list(NOISE_SCALES), "surface_fraction": SURFACE_FRACTION,
            "version": SAMPLER_VERSION, "inside_test": asset.parameters.get("inside_test", "sdf < 0")}
    return GroundTruth(
        points=points.astype(np.float32),
        occupancy=asset.occupancy(points),
        surface_points=surf.astype(np.float32),
        surface_colour=srgb_to_linear(srgb).astype(np.float32),
        meta=meta,
    )


def _write(path: Path, gt: GroundTruth) -> None:
    """Write to a temporary name in the same folder and rename: never a half-written entry.

    Two arrays, ``samples`` (N, 4) = points | occupancy and ``surface`` (M, 6) = points |
    linear colour, plus ``meta`` (JSON text): fewer members read faster than five.
    """
    fd, tmp = tempfile.mkstemp(suffix=".npz", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as f:
            np.savez(f, samples=np.concatenate([gt.points, gt.occupancy[:, None]], axis=1),
                     surface=np.concatenate([gt.surface_points, gt.surface_colour], axis=1),
                     meta=np.array(json.dumps(gt.meta)))
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def _read(path: Path) -> GroundTruth | None:
    """The cached entry, or None when it is missing or unreadable (then it is recomputed)."""
    try:
        with np.load(path, allow_pickle=False) as z:
            samples, surface, meta = z["samples"], z["surface"], json.loads(str(z["meta"]))
    except FileNotFoundError:
        return None
    except (OSError, ValueError, KeyError) as err:
        log.warning("ignoring an unreadable ground-truth cache entry %s (%s)", path, err)
        return None
    # views into the two loaded arrays (strided, not copied: copying was half the load time)
    return GroundTruth(points=samples[:, :3], occupancy=samples[:, 3],
                       surface_points=surface[:, :3], surface_colour=surface[:, 3:], meta=meta)


def sample_ground_truth(asset: Asset, count: int = 100_000, *, seed: int = 0,
                        cache: bool = True) -> GroundTruth:
    """The asset's ground truth, from the cache when an entry for these settings exists."""
    if not cache:
        return compute_ground_truth(asset, count, seed)
    path = cache_path(asset, count, seed)
    gt = _read(path)
    if gt is None:
        gt = compute_ground_truth(asset, count, seed)
        _write(path, gt)
    return gt


def _builtin_worker(job: tuple[str, int, int, int, int]) -> str:
    """Pool worker: rebuild a built-in asset from its numbers and fill its cache entry."""
    from genfield.assets.families import make_builtin

    family, index, asset_seed, count, seed = job
    asset = make_builtin(family, index, asset_seed)
    sample_ground_truth(asset, count, seed=seed, cache=True)
    return asset.name


def sample_ground_truths(assets: list[Asset], count: int = 100_000, *, seed: int = 0,
                         cache: bool = True, processes: int = 1,
                         progress: bool = True) -> list[GroundTruth]:
    """Ground truth of many assets, in their order, with a progress bar on stderr.

    With ``processes`` > 1 and the cache on, built-in assets missing from the cache are sampled
    by a pool of that many processes (spawned; they get only (family, index, seed) numbers and
    write the cache, which this process then reads). Meshes are always sampled here.
    """
    from tqdm import tqdm

    missing = [a for a in assets if cache and a.analytic and not cache_path(a, count, seed).exists()]
    if processes > 1 and len(missing) > 1:
        import multiprocessing

        jobs = []
        for a in missing:
            # make_builtin's source is "builtin:<family>:seed=<s>:index=<i>"
            _, fam, s, i = a.source.split(":")
            jobs.append((fam, int(i.split("=")[1]), int(s.split("=")[1]), count, seed))
        ctx = multiprocessing.get_context("spawn")
        with ctx.Pool(min(processes, len(jobs))) as pool:
            for _ in tqdm(pool.imap_unordered(_builtin_worker, jobs), total=len(jobs),
                          desc="ground truth", unit="asset", disable=not progress):
                pass
    return [sample_ground_truth(a, count, seed=seed, cache=cache)
            for a in tqdm(assets, desc="ground truth", unit="asset",
                          disable=not progress or len(assets) < 2)]
