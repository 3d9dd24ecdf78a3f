"""Contact sheet of a recipe's first images with label overlays.

Each tile is image i with its instance masks (tinted, or outlined with --outline), a box and
class name per visible object, and beside it the depth map with its scale in metres, so a
person can check the labels at a glance.
"""

from __future__ import annotations

import argparse


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("recipe", help="recipe file (.gfr)")
    p.add_argument("--out", required=True, help="sheet PNG to write")
    p.add_argument("--count", type=int, default=16, help="how many images, from index 0 (default 16)")
    p.add_argument("--columns", type=int, default=4, help="tiles per row (default 4)")
    p.add_argument("--outline", action="store_true", help="outline the masks instead of tinting them")
    p.add_argument("--model", help="model file to use instead of the one the recipe names")
    p.add_argument("--seed", type=int, help="seed (default: the recipe's)")


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from genfield.errors import UsageError
    from genfield.sheets.recipes import load_recipe_and_model, recipe_preview

    if not Path(args.recipe).is_file():
        raise UsageError(f"recipe {args.recipe!r} does not exist", where=args.recipe)
    if args.columns < 1:
        raise UsageError(f"--columns must be >= 1, got {args.columns}")
    sheet = recipe_preview(load_recipe_and_model(args.recipe, args.model), args.count, seed=args.seed,
                           style="outline" if args.outline else "tint", columns=args.columns)
    path = sheet.save(args.out)
    print(f"wrote {path} ({sheet.image.shape[1]}x{sheet.image.shape[0]}, {len(sheet.tiles)} images)")
    return 0
