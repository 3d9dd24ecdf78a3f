"""Benchmark cases of the training sources: ground-truth sampling and the reference tracer.

Baselines measured in the same run: for sampling, drawing and writing the same number of
plain uniform points (numpy's generator plus an uncompressed ``.npz`` per asset, the floor
any sampler with a file cache pays); for the tracer, one evaluation of the asset's distance at
every pixel's first box entry point (one sphere-tracing step), so the ratio reads as "steps".
"""

from __future__ import annotations

import os
import tempfile
import time
from pathlib import Path

import numpy as np

from genfield.bench import Figure, case, median_seconds

POINTS = 100_000


def _assets(n: int):
    from genfield.assets import builtin_assets, builtin_families

    names = [f.name for f in builtin_families()]
    counts = {f: n // len(names) + (1 if i < n % len(names) else 0) for i, f in enumerate(names)}
    return builtin_assets(counts, seed=0)


def _plain_baseline(n_assets: int, folder: Path) -> float:
    start = time.perf_counter()
    g = np.random.default_rng(0)
    for i in range(n_assets):
        np.savez(folder / f"plain-{i}.npz", points=g.uniform(-1, 1, (POINTS, 3)).astype(np.float32),
                 occupancy=np.zeros(POINTS, np.float32))
    return time.perf_counter() - start


@case("ground_truth", "sample 64 assets x 100k points (2 processes), then load them from the cache")
def _ground_truth(quick: bool) -> list[Figure]:
    from genfield.assets import sample_ground_truths

    n = 16 if quick else 64
    assets = _assets(n)
    before = os.environ.get("GENFIELD_CACHE")
    with tempfile.TemporaryDirectory() as tmp:
        os.environ["GENFIELD_CACHE"] = tmp  # a cold cache of our own; spawned workers inherit it
        try:
            start = time.perf_counter()
            first = sample_ground_truths(assets, POINTS, seed=0, processes=2)
            first_s = time.perf_counter() - start
            start = time.perf_counter()
            again = sample_ground_truths(assets, POINTS, seed=0, processes=2)
            cached_s = time.perf_counter() - start
            plain_s = _plain_baseline(n, Path(tmp))
        finally:
            if before is None:
                os.environ.pop("GENFIELD_CACHE", None)
            else:
                os.environ["GENFIELD_CACHE"] = before
    same = all(np.array_equal(a.points, b.points) for a, b in zip(first, again, strict=True))
    return [
        Figure("assets", float(n), "", f"{POINTS} points each + {POINTS // 4} surface points"),
        Figure("first_time_seconds", first_s, "s", "target well under 60 s for 64 assets"),
        Figure("cached_seconds", cached_s, "s", "target < 1 s for 64 assets"),
        Figure("plain_uniform_seconds", plain_s, "s", "baseline: uniform points + npz write"),
        Figure("first_over_plain", first_s / plain_s, "x", "same run"),
        Figure("cache_identical", float(same), "bool", "must be 1"),
    ]


@case("reference_tracer", "trace a 128x128 view of one analytic asset (and of a mesh)")
def _reference_tracer(quick: bool) -> list[Figure]:
    import trimesh

    from genfield.assets import load_mesh_assets, make_builtin
    from genfield.render.camera import look_at, make_camera, orbit_position, pixel_rays
    from genfield.render.reference import _slab, trace_reference
    from genfield.scene import Light, Pose

    repeats = 3 if quick else 7
    asset = make_builtin("cup", 0)  # the family with the most CSG nodes per evaluation
    pose = Pose.from_ypr((0.0, 0.0, 0.0), 0.4, 0.0, 0.0, 1.0)
    cam = make_camera(128, 128, look_at(orbit_position((0, 0, 0), 3.2, 0.5, 0.8), (0, 0, 0)),
                      fov_deg=45.0)
    trace_s = median_seconds(lambda: trace_reference(cam, [(asset, pose)], light=Light()), repeats)
    shadow_s = median_seconds(
        lambda: trace_reference(cam, [(asset, pose)], light=Light(shadows=True)), repeats)

    def one_step():
        rays = pixel_rays(cam)
        o = (rays.origins - pose.t) @ pose.R
        d = rays.directions @ pose.R
        near, far = _slab(o, d, -np.ones(3), np.ones(3))
        asset.sdf((o + near[:, None] * d)[near <= far])

    step_s = median_seconds(one_step, repeats)
    with tempfile.TemporaryDirectory() as tmp:
        torus = trimesh.creation.torus(0.6, 0.3, major_sections=128, minor_sections=64)
        torus.export(Path(tmp) / "torus.ply")
        mesh_asset = load_mesh_assets(Path(tmp) / "torus.ply")[0]
    mesh_s = median_seconds(lambda: trace_reference(cam, [(mesh_asset, pose)]), repeats)
    return [
        Figure("analytic_128_seconds", trace_s, "s", "cup-0000, Lambert; target < 1 s"),
        Figure("analytic_128_shadows_seconds", shadow_s, "s", "with shadow rays"),
        Figure("one_sdf_pass_seconds", step_s, "s", "baseline: one distance evaluation per ray"),
        Figure("trace_over_one_pass", trace_s / step_s, "x", "same run"),
        Figure("mesh_128_seconds", mesh_s, "s", f"{len(mesh_asset.mesh.faces)}-face torus, Embree"),
    ]
