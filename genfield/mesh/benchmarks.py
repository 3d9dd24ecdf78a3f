"""Benchmark cases of mesh extraction: points evaluated and speed against dense evaluation.

The field has the real network's query cost: genfield's FieldNetwork at its default size
(4 x 128 ReLU trunk, 6-octave Fourier features; ``genfield.field.network``) with its
initial weights, whose logit is added to the logit of an analytic thin-walled cup. The cup
gives a known surface of realistic area (walls, a floor, a handle); the network makes every
query cost what a trained model's does. Both extractions query the same field in the same run.
"""

from __future__ import annotations

import logging
import os
import time

import numpy as np

from genfield.bench import Figure, case, median_seconds, quick_model

log = logging.getLogger(__name__)

RESOLUTION = 128
LARGE = 256
WIDTH = 1.0 / RESOLUTION  # analytic transition, half a cell: about as sharp as a trained field


def cup_sdf(p: np.ndarray) -> np.ndarray:
    """Signed distance bound (N,) of a cup at points (N, 3): wall 0.08, ring handle r 0.06.

    CSG on distance bounds: union = min, subtraction = max(a, -b) (the 0 level is exact).
    """
    r = np.hypot(p[:, 0], p[:, 1])
    outer = np.maximum(r - 0.6, np.abs(p[:, 2]) - 0.7)
    cavity = np.maximum(r - 0.52, -(p[:, 2] + 0.62))
    handle = np.hypot(np.hypot(p[:, 0] - 0.72, p[:, 2]) - 0.3, p[:, 1]) - 0.06
    return np.minimum(np.maximum(outer, -cavity), handle)


def network_field():
    """An occupancy function (N, 3) -> (N,) through the field network (see the module doc)."""
    import torch

    from genfield.field.config import NetworkConfig
    from genfield.field.network import FieldNetwork

    torch.manual_seed(0)
    cfg = NetworkConfig()
    net = FieldNetwork(cfg).eval()
    code = torch.zeros(1, cfg.shape_dim)

    def occupancy(points: np.ndarray) -> np.ndarray:
        with torch.inference_mode():
            logit, _ = net.geometry(torch.from_numpy(np.ascontiguousarray(points))[None], code)
        z = -cup_sdf(points) / WIDTH + logit[0].numpy()  # (N,) analytic + network logit
        return (1.0 / (1.0 + np.exp(-np.clip(z, -60.0, 60.0)))).astype(np.float32)

    return occupancy


def _threads(n: int):
    import torch

    before = torch.get_num_threads()
    torch.set_num_threads(n)
    torch.set_flush_denormal(True)
    return before


@case("mesh_extract", "coarse-to-fine mesh extraction against dense evaluation of one field")
def _mesh_extract(quick: bool) -> list[Figure]:
    import torch

    from genfield.mesh.extract import extract_mesh
    from genfield.mesh.refine import dense_occupancy, refine_occupancy

    threads = min(2, os.cpu_count() or 1)
    before = _threads(threads)
    try:
        fn = network_field()
        start = time.perf_counter()
        dense = dense_occupancy(fn, RESOLUTION)
        dense_s = time.perf_counter() - start
        refined = refine_occupancy(fn, RESOLUTION)
        extract_s = median_seconds(lambda: extract_mesh(fn, resolution=RESOLUTION),
                                   repeats=1 if quick else 3, warmup=0 if quick else 1)
        a, b = refined.inside, dense.inside
        iou = float((a & b).sum() / (a | b).sum())
        start = time.perf_counter()
        large_mesh, large = extract_mesh(fn, resolution=LARGE)
        large_s = time.perf_counter() - start
    finally:
        torch.set_num_threads(before)
    field = (f"FieldNetwork 4x128 + Fourier features (initial weights) over an analytic cup, "
             f"torch {threads} threads")
    return [
        Figure("points_fraction_128", refined.points_evaluated / dense.points_evaluated, "",
               f"of {dense.points_evaluated} dense points; target <= 0.15; {field}"),
        Figure("speedup_vs_dense_128", dense_s / extract_s, "x",
               "whole extraction (refine + marching cubes) against dense grid evaluation "
               "alone, same field and run; target >= 5"),
        Figure("extract_seconds_128", extract_s, "s", "median, refine + marching cubes"),
        Figure("dense_seconds_128", dense_s, "s", "every grid point through the field"),
        Figure("iou_vs_dense_128", iou, "IoU", "inside grids, refined against dense; target >= 0.999"),
        Figure("extract_seconds_256", large_s, "s",
               f"{large.points_evaluated} points ({100 * large.fraction:.1f}% of dense), "
               f"{len(large_mesh.faces)} faces; target a few seconds on 2 cores"),
    ]


@case("mesh_chamfer", "Chamfer-L1 of extracted meshes to the true surface, per built-in family")
def _mesh_chamfer(quick: bool) -> list[Figure]:
    from genfield.assets import builtin_families, make_builtin
    from genfield.field.grid import occupancy_from_sdf
    from genfield.mesh.extract import extract_mesh
    from genfield.mesh.quality import chamfer_by_family, chamfer_distance
    from genfield.seeds import rng

    count = 50_000 if quick else 200_000
    per_family = 1 if quick else 3
    items, floor_items = [], []
    for fam in builtin_families():
        for index in range(per_family):
            asset = make_builtin(fam.name, index)
            mesh, _ = extract_mesh(lambda p, a=asset: occupancy_from_sdf(a.sdf(p), WIDTH),
                                   resolution=RESOLUTION)
            truth = asset.geometry.surface(count, rng(0, index, "bench-truth"))[0]
            items.append((fam.name, mesh, truth))
            again = asset.geometry.surface(count, rng(1, index, "bench-truth"))[0]
            floor_items.append((fam.name, chamfer_distance(again, truth)))
    scores = chamfer_by_family(items, rng(0, 0, "bench-chamfer"), count)
    floors = {name: float(np.mean([v for f, v in floor_items if f == name])) for name in scores}
    return [
        Figure(f"chamfer_{name}", value, "",
               f"analytic family field (sigmoid of the exact SDF) at {RESOLUTION}^3, {per_family} "
               f"asset(s), {count} points a side, object units; sampling floor {floors[name]:.4g} "
               "(two samples of the true surface)")
        for name, value in scores.items()
    ]


@case("mesh_chamfer_trained", "Chamfer-L1 of a trained model's meshes to its training assets")
def _mesh_chamfer_trained(quick: bool) -> list[Figure]:
    from genfield.mesh.from_model import builtin_asset, variant_mesh
    from genfield.mesh.quality import chamfer_by_family, chamfer_distance
    from genfield.seeds import rng

    model = quick_model()
    book = model.codebook
    resolution = 64 if quick else RESOLUTION
    count = 30_000 if quick else 100_000
    items, floors, empty = [], {}, 0
    for row, (family, source) in enumerate(zip(book.families, model.sources, strict=True)):
        asset = builtin_asset(source)
        if asset is None:
            continue  # a mesh source: its true surface is a file the bench does not have
        mesh, _ = variant_mesh(model, book.shape[row], None, resolution=resolution,
                               min_part=model.config.prior.clean_fraction)
        if len(mesh.faces) == 0:
            empty += 1  # no surface at all: no Chamfer distance to take
            continue
        truth = asset.geometry.surface(count, rng(0, row, "bench-truth"))[0]
        items.append((family, mesh, truth))
        again = asset.geometry.surface(count, rng(1, row, "bench-truth"))[0]
        floors.setdefault(family, []).append(chamfer_distance(again, truth))
    scores = chamfer_by_family(items, rng(0, 0, "bench-chamfer"), count)
    steps = model.metrics.get("steps", "?")
    return [Figure("empty_meshes", float(empty), "", f"of {len(book.names)} training codes; must be 0")] + [
        Figure(f"chamfer_trained_{name}", value, "",
               f"quick preset model ({steps} steps), its training codes at {resolution}^3, "
               f"{count} points a side, object units; sampling floor "
               f"{float(np.mean(floors[name])):.4g}")
        for name, value in scores.items()
    ]
