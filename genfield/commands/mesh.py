"""Export the mesh of a code pair (SOURCE a model, with --shape), or of a whole concrete scene
of a recipe (SOURCE a .gfr, with --index). EXPR is a code expression of the recipe language:
a code name (quotes optional), prior [temperature t] (drawn with --seed), lerp ["a": w, "b": w],
slerp [...], CODE shift dim k by v, or an explicit vector. Without --appearance, --shape gives
both codes, as 'asset' does in a recipe. FILE ends in .glb, .ply or .obj; a scene is one .glb
with a node per object named ID-LABEL, posed in metres. PLY and OBJ colours are sRGB, GLB
colours linear (the glTF rule). A single mesh is in the object cube [-1, 1]^3 unless
--real-size makes it metres.
"""

from __future__ import annotations

import argparse


def _fraction(text: str) -> float:
    value = float(text)
    if not 0.0 <= value < 1.0:
        raise argparse.ArgumentTypeError(f"must be in [0, 1), got {text}")
    return value


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("source", help="model file, or a recipe (.gfr) with --index")
    p.add_argument("--out", required=True, metavar="FILE", help="output file: .glb, .ply or .obj")
    code = p.add_argument_group("one code pair (SOURCE is a model)")
    code.add_argument("--shape", metavar="EXPR", help="shape code expression")
    code.add_argument("--appearance", metavar="EXPR",
                      help="appearance code expression (default: the one --shape gives)")
    code.add_argument("--real-size", nargs="?", const="model", metavar="HALF_EXTENT",
                      help="scale to metres: the nearest training asset's size, or this "
                           "half-extent in metres")
    scene = p.add_argument_group("a whole scene (SOURCE is a recipe)")
    scene.add_argument("--index", type=int, metavar="I", help="concrete scene I of the recipe")
    scene.add_argument("--model", metavar="MODEL", help="model file instead of the recipe's")
    scene.add_argument("--floor", action="store_true", help="add the floor (z = 0) under the objects")
    p.add_argument("--seed", type=int, metavar="S",
                   help="seed of prior draws (default 0), or of the recipe (default: its own)")
    p.add_argument("--resolution", type=int, default=128, metavar="R",
                   help="cells per axis of the finest grid, COARSE times a power of two (default 128)")
    p.add_argument("--coarse", type=int, default=32, metavar="C",
                   help="cells per axis of the first grid; a detached part that falls between "
                        "its points (2/C apart) can be missed (default 32)")
    p.add_argument("--min-part", type=_fraction, default=0.0, metavar="F",
                   help="drop floating pieces under this fraction of the volume (default 0: keep all)")
    p.add_argument("--threads", type=int, metavar="N", help="torch threads (default: all cores)")


def _check(args: argparse.Namespace) -> None:
    from pathlib import Path

    from genfield.errors import UsageError

    scene = args.index is not None
    if scene:
        for flag, given in (("--shape", args.shape), ("--appearance", args.appearance),
                            ("--real-size", args.real_size)):
            if given is not None:
                raise UsageError(f"{flag} is for one code pair; a scene's codes and sizes come "
                                 "from the recipe", hint="drop it, or drop --index")
        if args.index < 0:
            raise UsageError(f"--index must be >= 0, got {args.index}")
        if Path(args.out).suffix.lower() != ".glb":
            raise UsageError("a scene is written as one glTF binary", where=args.out,
                             hint="end the name in .glb")
    else:
        if args.floor or args.model:
            raise UsageError("--floor and --model belong to a scene", hint="add --index I")
        if args.shape is None:
            hint = "a recipe needs --index I" if Path(args.source).suffix == ".gfr" else \
                "e.g. --shape cup-0003, or --shape 'prior temperature 0.8'"
            raise UsageError("say which code to mesh with --shape EXPR", hint=hint)
    ratio = args.resolution // args.coarse if args.coarse >= 1 else 0
    if ratio < 1 or args.resolution != ratio * args.coarse or ratio & (ratio - 1):
        raise UsageError(f"--resolution {args.resolution} must be --coarse {args.coarse} times a "
                         "power of two", hint="e.g. --coarse 32 --resolution 128 or 256")
    if args.real_size not in (None, "model"):
        _metres(args.real_size)
    if args.seed is not None and args.seed < 0:
        raise UsageError(f"--seed must be >= 0, got {args.seed}")


def _code_text(text: str) -> str:
    """A bare code name as the shell leaves it (no quotes) becomes a quoted recipe text."""
    import re

    word = text.strip()
    if re.fullmatch(r"[A-Za-z0-9_][\w.-]*", word) and word != "prior":
        return f'"{word}"'
    return text


def _one_pair(args: argparse.Namespace):
    from genfield.field.model import load_model
    from genfield.mesh.from_model import training_half_extent, variant_mesh
    from genfield.recipe.expression import resolve_code_text
    from genfield.seeds import rng

    model = load_model(args.source)
    book = model.codebook
    stream = rng(args.seed or 0, 0, "mesh-codes")
    if args.appearance is None:
        joint, _ = resolve_code_text(_code_text(args.shape), "joint", book, stream)
        shape, appearance = joint[: book.shape_dim], joint[book.shape_dim :]
    else:
        shape, _ = resolve_code_text(_code_text(args.shape), "shape", book, stream)
        appearance, _ = resolve_code_text(_code_text(args.appearance), "appearance",
                                          book, stream, key="appearance", source="--appearance")
    mesh, stats = variant_mesh(model, shape.astype("float32"), appearance.astype("float32"),
                               resolution=args.resolution, coarse=args.coarse,
                               min_part=args.min_part, progress=True)
    note = "object units"
    if args.real_size is not None and len(mesh.faces):
        if args.real_size == "model":
            name, half = training_half_extent(book, model.sources, shape)
            note = f"metres (half-extent {half:.4g} m, as training asset {name})"
        else:
            half = _metres(args.real_size)
            note = f"metres (half-extent {half:.4g} m)"
        mesh = mesh.scaled(half)
    return mesh, stats, note


def _metres(text: str) -> float:
    from genfield.errors import UsageError

    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not value > 0 or value == float("inf"):
        raise UsageError(f"--real-size wants a half-extent in metres > 0, got {text!r}",
                         hint="e.g. --real-size 0.05, or --real-size alone for the model's")
    return value


def _scene(args: argparse.Namespace):
    from pathlib import Path

    from genfield.errors import UsageError
    from genfield.field.model import load_model
    from genfield.mesh.from_model import scene_parts
    from genfield.recipe import check_codes, draw_scene, load_recipe

    recipe = load_recipe(Path(args.source), model=args.model)
    if recipe.model_path is None:
        raise UsageError("the recipe names no model", where=args.source,
                         hint="add 'model \"FILE\"' to it, or give --model FILE")
    model = load_model(recipe.model_path)
    check_codes(recipe, model.codebook)
    seed = recipe.dataset.seed if args.seed is None else args.seed
    scene = draw_scene(recipe, model.codebook, seed, args.index)
    return scene_parts(model, scene, resolution=args.resolution, coarse=args.coarse,
                       min_part=args.min_part, floor=args.floor, progress=True), seed


def run(args: argparse.Namespace) -> int:
    import os
    import time

    from genfield.compute import heavy_work
    from genfield.mesh.export import write_mesh, write_scene

    _check(args)
    start = time.perf_counter()
    with heavy_work(max(1, args.threads or os.cpu_count() or 1)):
        if args.index is None:
            mesh, stats, note = _one_pair(args)
            write_mesh(mesh, args.out)
            print(f"{args.out}: {len(mesh.vertices)} vertices, {len(mesh.faces)} faces in {note}; "
                  f"{stats.points_evaluated} field points ({100 * stats.fraction:.1f}% of a dense "
                  f"{args.resolution}^3 grid) in {time.perf_counter() - start:.1f} s")
        else:
            parts, seed = _scene(args)
            write_scene(parts, args.out)
            faces = sum(len(p.mesh.faces) for p in parts)
            print(f"{args.out}: scene {args.index} (seed {seed}), {len(parts)} nodes "
                  f"({', '.join(p.name for p in parts)}), {faces} faces in metres, world frame; "
                  f"{time.perf_counter() - start:.1f} s")
    return 0
