"""Render a strip or a grid that varies one or two parameters, all else held fixed.

On a recipe: ``genfield sweep RECIPE --vary PARAM=VALUES [--vary PARAM2=VALUES] --out
sheet.png`` renders image INDEX of the recipe at one seed with PARAM set to each value (two
--vary options make a grid, or with --zip one strip of paired values). VALUES are written as
in a recipe's sweep block: ``0deg..90deg steps 7`` (7 values, both ends included),
``1cm, 1.5cm, 2cm`` or one value (quote them for the shell). With no --vary, the recipe's own
sweep blocks are rendered; --list prints the numbers a recipe lets you sweep.

On a model: ``genfield sweep MODEL --shape A..B --appearance C --out sheet.png`` interpolates
the shape code from named code A to B in --steps steps at C's appearance (or the reverse with
--shape C --appearance A..B; two ranges make a grid), one object under a fixed studio camera.
"""

from __future__ import annotations

import argparse
from pathlib import Path


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("source", help="recipe file, or model file with --shape/--appearance")
    p.add_argument("--out", help="sheet PNG to write (required unless --list)")
    p.add_argument("--frames", metavar="DIR",
                   help="also write each frame as DIR/NNNN.png and its factors as DIR/NNNN.json")
    g = p.add_argument_group("recipe sweeps")
    g.add_argument("--vary", action="append", default=[], metavar="PARAM=VALUES",
                   help="a recipe number to sweep, values as in a sweep block, e.g. "
                        "'camera.azimuth=0deg..90deg steps 7' (at most twice)")
    g.add_argument("--zip", action="store_true",
                   help="pair the values of two --vary options into one strip instead of a grid")
    g.add_argument("--model", help="model file to use instead of the one the recipe names")
    g.add_argument("--seed", type=int, help="seed for everything not swept (default: the recipe's)")
    g.add_argument("--index", type=int, default=0, help="which image of the recipe to hold (default 0)")
    g.add_argument("--list", action="store_true",
                   help="list the recipe's sweepable numbers (name, unit, what sets it) and stop")
    g = p.add_argument_group("model sweeps")
    g.add_argument("--shape", metavar="A[..B]",
                   help="shape code: a name, or a range NAME..NAME (default: the appearance's "
                   "first name)")
    g.add_argument("--appearance", metavar="C[..D]",
                   help="appearance code: a name, or a range (default: the shape's first name)")
    g.add_argument("--steps", type=int, default=7, help="frames along each range (default 7)")


def _check_exists(path: str, what: str) -> Path:
    from genfield.errors import UsageError

    p = Path(path)
    if not p.is_file():
        raise UsageError(f"{what} {path!r} does not exist", where=path)
    return p


def _model_sweep(args: argparse.Namespace):
    from genfield.errors import UsageError
    from genfield.field.model import load_model
    from genfield.sheets.make import latent_sweep
    from genfield.sheets.studio import CodeRange, latent_plan

    if args.vary or args.zip or args.model or args.seed is not None or args.index:
        raise UsageError("--vary, --zip, --model, --seed and --index are for recipe sweeps, "
                         "not with --shape/--appearance")
    model = load_model(_check_exists(args.source, "model file"))
    if args.shape is not None:
        shape = CodeRange.parse(args.shape, "--shape")
        appearance = CodeRange.parse(args.appearance or shape.start, "--appearance")
    else:  # only --appearance: the shape of its first code
        appearance = CodeRange.parse(args.appearance, "--appearance")
        shape = CodeRange(appearance.start)
    return latent_sweep(model, latent_plan(model.codebook, shape, appearance, args.steps))


def _vary(text: str) -> tuple[str, str]:
    """``PARAM=VALUES`` to (parameter, values text); the recipe reads the values."""
    from genfield.errors import UsageError

    param, eq, values = text.partition("=")
    if not eq or not param.strip() or not values.strip():
        raise UsageError(f"--vary {text}: expected PARAM=VALUES",
                         hint="e.g. --vary 'camera.azimuth=0deg..90deg steps 7'")
    return param.strip(), values.strip()


def _recipe_sweep(args: argparse.Namespace):
    from genfield.errors import UsageError
    from genfield.sheets.recipes import load_recipe_and_model, recipe_sweep

    if args.steps != 7:
        raise UsageError("--steps is for model sweeps (--shape/--appearance); "
                         "a recipe sweep gives its steps in VALUES, e.g. 0deg..90deg steps 7")
    if len(args.vary) > 2:
        raise UsageError(f"--vary: a sheet has two axes, got {len(args.vary)} --vary options")
    if args.zip and len(args.vary) != 2:
        raise UsageError("--zip pairs the values of exactly two --vary options")
    if args.index < 0:
        raise UsageError(f"--index must be >= 0, got {args.index}")
    varies = [_vary(text) for text in args.vary]
    loaded = load_recipe_and_model(_check_exists(args.source, "recipe"), args.model)
    return recipe_sweep(loaded, varies, zipped=args.zip, seed=args.seed, index=args.index)


def _list(args: argparse.Namespace) -> int:
    """Print every parameter --vary can name, in the recipe's order."""
    from genfield.recipe import load_recipe

    recipe = load_recipe(_check_exists(args.source, "recipe"), model=args.model)
    width = max((len(n) for n in recipe.parameters()), default=4)
    for name in recipe.parameters():
        info = recipe.params[name]
        kind = "whole" if info.whole else info.unit
        drawn = "random" if info.random else "fixed"
        print(f"{name:{width}s}  {kind:7s} {drawn:7s} {info.source}")
    return 0


def run(args: argparse.Namespace) -> int:
    from genfield.errors import UsageError

    if args.list:
        return _list(args)
    if not args.out:
        raise UsageError("--out is required: the sheet PNG to write")
    model_mode = args.shape is not None or args.appearance is not None
    sweeps = _model_sweep(args) if model_mode else _recipe_sweep(args)
    if not isinstance(sweeps, list):
        sweeps = [sweeps]
    out = Path(args.out)
    for k, sweep in enumerate(sweeps):
        path = out if len(sweeps) == 1 else out.with_name(f"{out.stem}-{k + 1}{out.suffix}")
        sheet = sweep.sheet()
        sheet.save(path)
        print(f"wrote {path} ({sheet.image.shape[1]}x{sheet.image.shape[0]}, "
              f"{len(sweep.outputs)} frames)")
        if args.frames:
            frames = Path(args.frames) if len(sweeps) == 1 else Path(args.frames) / f"sweep-{k + 1}"
            sweep.write_frames(frames)
            print(f"wrote {len(sweep.outputs)} frames and their factors to {frames}/")
    return 0
