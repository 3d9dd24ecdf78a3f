"""Learn a generative feature field over training sources, from a TOML config.

CONFIG is a TOML file or a preset name: 'quick' (about a minute) or 'default' (about five).
Progress goes to stderr; every training.preview_every steps, and at the end, a preview sheet
(reference renders beside the field's) is written next to the model as MODEL.preview.png.
Ctrl-C saves a checkpoint (MODEL.ckpt) that --resume continues from.
"""

from __future__ import annotations

import argparse


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("config", nargs="?", help="training config (TOML) or a preset: quick, default")
    p.add_argument("--out", help="model file to write (.gfm, or .safetensors: the same format)")
    p.add_argument("--resume", metavar="CKPT", help="continue from a checkpoint of this config")
    p.add_argument("--threads", type=int, metavar="N",
                   help="torch threads (overrides the config; fixes the result with the seed)")
    p.add_argument("--list-families", action="store_true",
                   help="list the built-in families and their parameters, then exit")
    p.add_argument("--quiet", action="store_true", help="no progress bars")


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from genfield.errors import UsageError

    if args.list_families:
        from genfield.assets import describe_families

        print(describe_families())
        return 0
    if not args.config or not args.out:
        raise UsageError("give a config (a .toml file or 'quick' / 'default') and --out MODEL",
                         hint="e.g. 'genfield train quick --out quick.gfm'")
    if args.threads is not None and args.threads < 1:
        raise UsageError(f"--threads must be >= 1, got {args.threads}")
    out = Path(args.out)
    from genfield.field.modelfile import MODEL_SUFFIXES

    if out.suffix not in MODEL_SUFFIXES:
        raise UsageError(f"--out must end in {' or '.join(MODEL_SUFFIXES)}, got {args.out!r}")
    resume = Path(args.resume) if args.resume else None
    if resume is not None and not resume.is_file():
        raise UsageError(f"--resume: no checkpoint at {args.resume!r}")

    from genfield.field.config import load_config

    cfg, base = load_config(args.config)  # before torch is imported: a bad config fails fast
    if args.threads is not None:
        cfg = cfg.with_threads(args.threads)

    from genfield.field.pipeline import train

    model = train(cfg, base, out, resume=resume, progress=not args.quiet)
    fit = model.metrics["fit"]
    print(f"wrote {out}: {len(model.codebook.names)} codes, {model.metrics['steps']} steps, "
          f"IoU@{model.metrics['iou_resolution']} mean {fit['iou_mean']:.4f} "
          f"worst {fit['iou_worst']:.4f}, colour L1 {fit['colour_l1_mean']:.4f}")
    return 0
