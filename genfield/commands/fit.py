"""Fit a shape and appearance code for a new mesh, with the network frozen.

The mesh is normalised like every training source (genfield.assets), sampled, and a code
pair is optimised to reproduce its occupancy and colours; the new model file holds every
code of MODEL plus this one under NAME. The IoU it reaches is printed and stored.
"""

from __future__ import annotations

import argparse


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("model", help="model file")
    p.add_argument("mesh", help="mesh file (OBJ, PLY, STL, glTF/GLB)")
    p.add_argument("--name", required=True, help="name to store the new code under")
    p.add_argument("--out", required=True, help="model file to write (may equal MODEL)")
    p.add_argument("--steps", type=int, default=300, help="optimiser steps (default 300)")
    p.add_argument("--samples", type=int, default=100_000,
                   help="ground-truth samples of the mesh (default 100000)")
    p.add_argument("--seed", type=int, default=0, help="seed of the samples and batches")
    p.add_argument("--threads", type=int, metavar="N", help="torch threads (default: the model's)")
    p.add_argument("--up", choices=["y", "z"], help="the mesh's up axis (default: by format)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    import re
    import time
    from pathlib import Path

    from genfield.errors import UsageError

    if not re.fullmatch(r"[A-Za-z0-9_.\-]+", args.name):
        raise UsageError(f"--name may hold letters, digits and _ . - only, got {args.name!r}")
    if args.steps < 1 or args.seed < 0 or (args.threads is not None and args.threads < 1):
        raise UsageError("--steps and --threads must be >= 1, --seed >= 0")
    if args.samples < 4096:
        raise UsageError(f"--samples must be >= 4096, got {args.samples}")
    from genfield.field.modelfile import MODEL_SUFFIXES

    if Path(args.out).suffix not in MODEL_SUFFIXES:
        raise UsageError(f"--out must end in {' or '.join(MODEL_SUFFIXES)}, got {args.out!r}")
    mesh = Path(args.mesh)
    if not mesh.is_file():
        raise UsageError(f"no mesh file at {args.mesh!r}")

    from genfield.assets import load_mesh_assets
    from genfield.compute import heavy_work
    from genfield.field.fitting import FitSettings, fit_code, with_code
    from genfield.field.model import load_model

    model = load_model(args.model)
    if args.name in model.codebook.names:
        raise UsageError(f"{args.model} already has a code named {args.name!r}",
                         hint="choose another --name")
    (asset,) = load_mesh_assets(mesh, up=args.up)
    start = time.perf_counter()
    with heavy_work(args.threads or model.config.resolved_threads()):
        fit = fit_code(model, asset, FitSettings(steps=args.steps, samples=args.samples,
                                                 seed=args.seed), progress=not args.quiet)
    seconds = time.perf_counter() - start
    with_code(model, args.name, asset.family, asset.source, fit).save(args.out)
    print(f"wrote {args.out}: {args.name} fitted in {seconds:.1f} s from {fit.start}, "
          f"IoU@{model.config.evaluation.iou_resolution} {fit.iou:.4f}, "
          f"colour L1 {fit.colour_l1:.4f}")
    return 0
