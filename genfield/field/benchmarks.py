"""Benchmark cases of the field: training presets, baking fresh codes, prior samples, fitting.

The presets are trained once per bench run, into a temporary folder, with the ground truth
filled into the usual cache first (so ``train_seconds`` is what a second ``genfield train``
takes); the later cases reuse the quick model. ``--quick`` trains a tenth of the steps: its
figures show the machinery works, not the targets.
"""

from __future__ import annotations

import dataclasses
import tempfile
import time
from pathlib import Path

import numpy as np

from genfield.bench import Figure, case, median_seconds

_MODELS: dict[str, object] = {}
_TMP = tempfile.TemporaryDirectory(prefix="genfield-bench-field-")


def _trained(preset: str, quick: bool):
    """(model, seconds of the whole ``train`` call) for a preset, trained once per run."""
    key = f"{preset}:{quick}"
    if key not in _MODELS:
        from genfield.field.config import load_config
        from genfield.field.pipeline import resolve_sources, sample_truths, train

        cfg, base = load_config(preset)
        if quick:
            t = cfg.training
            cfg = dataclasses.replace(cfg, training=dataclasses.replace(
                t, steps=max(t.warmup_steps + 1, t.steps // 10)))
        sample_truths(resolve_sources(cfg, base).assets, cfg, progress=False)  # fill the cache
        start = time.perf_counter()
        model = train(cfg, base, Path(_TMP.name) / f"{preset}.safetensors", progress=False)
        _MODELS[key] = (model, time.perf_counter() - start)
    return _MODELS[key]


def _training_figures(preset: str, quick: bool, seconds_target: float, iou_target: str) -> list[Figure]:
    model, seconds = _trained(preset, quick)
    m = model.metrics
    note = " (--quick: a tenth of the steps)" if quick else ""
    fit, views, prior = m["fit"], m.get("views", {}), m.get("prior", {})
    out = [
        Figure("train_seconds", seconds, "s",
               f"target <= {seconds_target:g} s on 2 cores; ground truth cached; includes scoring{note}"),
        Figure("steps", float(m["steps"]), "steps", f"{m['training_assets']} assets"),
        Figure("iou64_mean", fit["iou_mean"], "IoU", iou_target + note),
        Figure("iou64_worst", fit["iou_worst"], "IoU", f"{fit['iou_worst_asset']}{note}"),
        Figure("colour_l1", fit["colour_l1_mean"], "", "linear albedo at held-out surface points"),
    ]
    if views:
        out += [Figure("mask_iou_mean", views["mask_iou_mean"], "IoU", "rendered vs reference tracer"),
                Figure("psnr_mean", views["psnr_mean"], "dB", "sRGB, rendered vs reference tracer")]
    if prior:
        out.append(Figure("prior_valid", prior["valid_fraction"], "fraction", "T = 1, target >= 0.9"))
    return out


@case("field_train_quick", "train the quick preset; its stored metrics")
def _train_quick(quick: bool) -> list[Figure]:
    return _training_figures("quick", quick, 90.0, "target >= 0.93")


@case("field_train_default", "train the default preset (32 assets); its stored metrics")
def _train_default(quick: bool) -> list[Figure]:
    figures = _training_figures("default", quick, 300.0, "target >= 0.97")
    return figures + [Figure("iou64_worst_target", 0.92, "IoU", "worst asset target"),
                      Figure("colour_l1_target", 0.01, "", "colour L1 target")]


@case("field_bake", "bake fresh prior codes: coarse-to-fine against the per-sample network")
def _bake(quick: bool) -> list[Figure]:
    from genfield.field.evaluate import iou
    from genfield.field.grid import SIGMA_MAX, grid_points
    from genfield.field.variants import prior_draws

    model, _ = _trained("quick", quick)
    draws = prior_draws(model, 3 if quick else 8, 1.0, seed=11)
    figures = []
    for res in (33, 65):
        pts = grid_points(res).reshape(-1, 3).astype(np.float32)
        times, dense_times, fractions, agree = [], [], [], []
        for s, a, _ in draws:
            def fresh(s=s, a=a, r=res):
                model.forget_shapes()  # each repeat a fresh code's bake, not a memoised shape's
                return model.bake(s, a, r)

            times.append(median_seconds(fresh, 3))
            dense_times.append(median_seconds(lambda s=s, a=a, p=pts: model.query(p, s, a), 1,
                                              warmup=0))
            grid, stats = model.bake_with_stats(s, a, res, clean=False)
            occ, _ = model.query(pts, s, a)
            fractions.append(stats.fraction)
            agree.append(iou(grid.density > SIGMA_MAX / 2, (occ > 0.5).reshape((res,) * 3)))
        t, d = float(np.median(times)), float(np.median(dense_times))
        figures += [
            Figure(f"bake{res}_ms", 1e3 * t, "ms", "per fresh code, median (renderer wants ~40 ms at 2 cores)"),
            Figure(f"dense{res}_ms", 1e3 * d, "ms", "baseline: Model.query on every grid point"),
            Figure(f"bake{res}_speedup", d / t, "x", "same run"),
            Figure(f"bake{res}_evaluated", float(np.mean(fractions)), "fraction", "of grid points"),
            Figure(f"bake{res}_agreement", float(np.min(agree)), "IoU", "inside sets vs dense, worst code"),
        ]
    return figures


@case("field_prior", "validity and Coverage / MMD / 1-NNA of prior samples (quick model)")
def _prior(quick: bool) -> list[Figure]:
    from genfield.field.pipeline import resolve_sources
    from genfield.field.variants import score_prior

    model, _ = _trained("quick", quick)
    cfg = model.config
    holdout = resolve_sources(cfg, Path(".")).holdout
    figures = []
    for temperature in (1.0, 0.7):
        r = score_prior(model, holdout, samples=16 if quick else 64, temperature=temperature,
                        seed=cfg.seed + 1, cloud_points=cfg.evaluation.cloud_points)
        figures.append(Figure(f"valid_T{temperature:g}", r["valid_fraction"], "fraction",
                              "target >= 0.9 at T = 1" if temperature == 1.0 else ""))
        g = r.get("generative")
        if g and temperature == 1.0:
            figures += [Figure("coverage", g["coverage"], "fraction", f"vs {g['reference']} unseen assets"),
                        Figure("mmd_chamfer_l1", g["mmd_chamfer_l1"], "object units", ""),
                        Figure("nna", g["nna"], "accuracy", "1-NNA, ideal 0.5")]
    return figures


@case("field_fit", "fit a code to an unseen asset of a trained family (network frozen)")
def _fit(quick: bool) -> list[Figure]:
    from genfield.assets import make_builtin
    from genfield.field.fitting import FitSettings, fit_code

    model, _ = _trained("quick", quick)
    counts = model.config.sources.families
    figures = []
    for family in list(counts)[: 1 if quick else 2]:
        asset = make_builtin(family, counts[family] + 50)  # far past the held-out indices
        start = time.perf_counter()
        fit = fit_code(model, asset, FitSettings(steps=100 if quick else 300))
        seconds = time.perf_counter() - start
        figures += [Figure(f"fit_{family}_seconds", seconds, "s", "target < 60 s; includes sampling"),
                    Figure(f"fit_{family}_iou", fit.iou, "IoU", "target >= 0.85")]
    return figures
