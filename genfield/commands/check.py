"""Parse and check a recipe; print a summary, the first concrete scenes, or the recipe
in the canonical layout."""

from __future__ import annotations

import argparse


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("recipe", help="recipe file (.gfr)")
    p.add_argument("--model", help="model file whose code names the recipe may use "
                   "(default: the recipe's model, when that file exists)")
    what = p.add_mutually_exclusive_group()
    what.add_argument("--show", type=int, metavar="N",
                      help="print the first N concrete scenes as JSON, one a line")
    what.add_argument("--format", action="store_true",
                      help="print the recipe in the canonical layout (comments kept)")


def _codebook(recipe, explicit: bool):
    """The model's code table when its file is there, and a note for the summary."""
    from genfield.errors import UsageError
    from genfield.field.codebook import read_codebook

    path = recipe.model_path
    if path is None:
        return None, ""
    if not path.is_file():
        if explicit:
            raise UsageError(f"no model file {path}", hint="train one with 'genfield train'")
        return None, "not there yet: code names not checked"
    return read_codebook(path), "code names checked"


def run(args: argparse.Namespace) -> int:
    from genfield.errors import UsageError
    from genfield.recipe import check_codes, draw_scene, format_recipe, load_recipe
    from genfield.recipe.summary import describe

    recipe = load_recipe(args.recipe, model=args.model)
    codebook, note = _codebook(recipe, explicit=args.model is not None)
    if codebook is not None:
        check_codes(recipe, codebook)
    if args.format:
        print(format_recipe(recipe), end="")
    elif args.show is not None:
        if args.show < 0:
            raise UsageError(f"--show takes a count >= 0, got {args.show}")
        for i in range(min(args.show, recipe.dataset.count)):
            print(draw_scene(recipe, codebook, recipe.dataset.seed, i).to_json())
    else:
        print(describe(recipe, note))
    return 0
