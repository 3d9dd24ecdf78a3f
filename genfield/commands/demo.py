"""Run the main job end to end on built-in data: train, check, render, preview, sweep, mesh.

Trains the quick preset on the built-in part families (or reuses the model cached by an
earlier run, keyed by the preset, its content and the genfield version), checks the demo
recipe, renders it to a small labelled dataset, and writes a preview sheet, sweep sheets and
a GLB of one scene into --out; then prints where each file is and what to try next.
"""

from __future__ import annotations

import argparse
import os
import time
from dataclasses import dataclass
from pathlib import Path

DEMO_RECIPE = "demo-sorting-mat.gfr"  # in recipes/ of a checkout, genfield/recipes/ of a wheel
PRESET = "quick"
STEPS = 6


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--out", default="demo-out",
                   help="folder for everything the demo writes (default demo-out)")
    p.add_argument("--count", type=int, default=24, help="images in the demo dataset (default 24)")
    p.add_argument("--retrain", action="store_true",
                   help="train again even if a cached model exists")
    p.add_argument("--model", help="use this model file instead of the cached or trained one")
    p.add_argument("--force", action="store_true",
                   help="replace the dataset an earlier demo left in --out")


def demo_recipe() -> Path:
    """The shipped demo recipe: the wheel's copy first, then the checkout's."""
    from genfield.errors import UsageError

    package = Path(__file__).resolve().parent.parent
    for folder in (package / "recipes", package.parent / "recipes"):
        if (folder / DEMO_RECIPE).is_file():
            return folder / DEMO_RECIPE
    raise UsageError(f"the demo recipe {DEMO_RECIPE} is missing from this installation")


def cached_model_path(config: str = PRESET) -> Path:
    """Where a trained model is cached: keyed by the config's name, its content and the
    genfield version (a changed preset or a new release trains afresh)."""
    import hashlib
    import json

    from genfield import __version__
    from genfield.field.config import load_config
    from genfield.paths import cache_dir

    cfg, _ = load_config(config)
    digest = hashlib.sha256(json.dumps(cfg.to_dict(), sort_keys=True).encode()).hexdigest()[:12]
    return cache_dir("models") / f"{Path(config).stem}-{__version__}-{digest}.gfm"


def cached_model(config: str = PRESET, retrain: bool = False) -> tuple[Path, str]:
    """The cached model of a training config (a preset name or a TOML file), trained first
    if it is missing, unreadable or ``retrain``; and how it was come by."""
    from genfield.errors import GenfieldError
    from genfield.field.config import load_config
    from genfield.field.model import load_model
    from genfield.field.pipeline import train

    path = cached_model_path(config)
    if path.is_file() and not retrain:
        try:
            load_model(path)
            return path, "reused the cached model"
        except GenfieldError as err:  # a damaged cache entry is retrained, not fatal
            print(f"      the cached model is unusable ({err.one_line()}); training again")
    cfg, base = load_config(config)
    tmp = path.with_name(f".{path.stem}.{os.getpid()}.training.gfm")
    train(cfg, base, tmp, progress=True)
    tmp.replace(path)  # a finished model appears whole, or not at all
    for extra in tmp.parent.glob(f"{tmp.stem}.*"):  # the trainer's preview sheet and checkpoint
        extra.replace(path.with_name(path.stem + extra.name[len(tmp.stem):]))
    return path, f"trained {config}"


def demo_model(given: str | None, retrain: bool) -> tuple[Path, str]:
    """The model file the demo uses: the one given, else the cached quick preset."""
    from genfield.errors import UsageError

    if given:
        if not Path(given).is_file():
            raise UsageError(f"model file {given!r} does not exist", where=given)
        return Path(given), "given"
    path, how = cached_model(PRESET, retrain)
    return path, how.replace(f"trained {PRESET}", f"trained the {PRESET} preset")


@dataclass(frozen=True)
class DemoDataset:
    root: Path
    summary: str


def render_dataset(recipe: Path, model: Path, root: Path, count: int, force: bool) -> DemoDataset:
    """Render the dataset, then load its annotations with pycocotools as a user would."""
    import contextlib
    import io
    import sys

    from pycocotools.coco import COCO
    from tqdm import tqdm

    from genfield.dataset.job import job_from_recipe
    from genfield.dataset.writer import write_dataset

    spec = job_from_recipe(recipe, model=model, count=count)

    def bar(total: int, done: int) -> tqdm:
        return tqdm(total=total, initial=done, unit="image", desc="render", file=sys.stderr)

    s = write_dataset(root, spec, progress=bar, force=force)
    with contextlib.redirect_stdout(io.StringIO()):  # COCO() prints its timings
        coco = COCO(str(root / "annotations.json"))
    cats = ", ".join(f"{c['name']} {len(coco.getAnnIds(catIds=[c['id']]))}"
                     for c in coco.loadCats(coco.getCatIds()))
    return DemoDataset(root, f"{s.images} images in {s.seconds:.1f} s; pycocotools reads "
                             f"{len(coco.getAnnIds())} object annotations ({cats})")


def check_summary(loaded) -> str:
    r = loaded.recipe
    return (f"ok: classes {', '.join(r.classes)}; {len(r.parameters())} sweepable numbers; "
            f"{len(r.sweeps)} sweep block(s); seed {r.dataset.seed}")


def widest_codes(book) -> tuple[str, str, str]:
    """(A, A2, B): the two codes of one family whose shapes lie farthest apart, and the code
    whose appearance lies farthest from A's, so that the latent sheet shows the most."""
    import numpy as np

    pairs = [(float(np.linalg.norm(book.shape[i] - book.shape[j])), i, j)
             for i in range(len(book.names)) for j in range(i + 1, len(book.names))
             if book.families[i] == book.families[j]]
    _, i, j = max(pairs) if pairs else (0.0, 0, 0)
    k = int(np.argmax(np.linalg.norm(book.appearance - book.appearance[i], axis=1)))
    return book.names[i], book.names[j], book.names[k]


def make_sweeps(loaded, out: Path) -> list[Path]:
    """The recipe's own sweep blocks, and a latent grid: shape between two codes of a family
    down the rows, appearance from the first of them to a far one across."""
    from genfield.sheets.make import latent_sweep
    from genfield.sheets.recipes import recipe_sweep
    from genfield.sheets.studio import CodeRange, latent_plan

    paths = [sweep.sheet().save(out / f"sweep-{k + 1}.png")
             for k, sweep in enumerate(recipe_sweep(loaded, []))]
    a, a2, b = widest_codes(loaded.model.codebook)
    if a != a2:
        plan = latent_plan(loaded.model.codebook, CodeRange(a, a2), CodeRange(a, b), steps=3)
        paths.append(latent_sweep(loaded.model, plan).sheet().save(out / "latent-sweep.png"))
    return paths


def scene_glb(loaded, path: Path) -> Path:
    from genfield.mesh.export import write_scene
    from genfield.mesh.from_model import scene_parts
    from genfield.recipe import draw_scene

    scene = draw_scene(loaded.recipe, loaded.model.codebook, loaded.recipe.dataset.seed, 0)
    # 64^3 keeps the demo quick and the file a few MB; 'genfield mesh' takes --resolution
    parts = scene_parts(loaded.model, scene, resolution=64, floor=scene.backdrop.floor,
                        progress=True)
    return write_scene(parts, path)


def next_steps(recipe: Path, model: Path, out: Path, book) -> list[str]:
    a, a2, b = widest_codes(book)
    first = sorted((out / "dataset" / "images").glob("*.png"))
    return [
        f"genfield check {recipe} --model {model} --show 1   # the first concrete scene as JSON",
        f"genfield sweep {recipe} --model {model} --vary 'camera.azimuth=0deg..180deg steps 7' "
        f"--out {out / 'turn.png'}",
        f"genfield sweep {model} --shape {a}..{a2} --appearance {b} --out {out / 'codes.png'}",
        f"genfield inspect {model} --sheet {out / 'codes-sheet.png'}",
        f"genfield mesh {recipe} --model {model} --index 3 --floor --resolution 128 "
        f"--out {out / 'scene-3.glb'}",
        f"genfield render {recipe} --model {model} --count 1000 --workers 2 --out my-dataset",
        "copy the recipe, change its objects, camera and light, and preview it:",
        f"  genfield preview my.gfr --model {model} --out my-preview.png",
        *([f"open {first[0]} and its labels beside it in {out / 'dataset'}"] if first else []),
    ]


def run(args: argparse.Namespace) -> int:
    from genfield.errors import UsageError
    from genfield.sheets.recipes import load_recipe_and_model, recipe_preview

    if args.count < 1:
        raise UsageError(f"--count must be >= 1, got {args.count}")
    if args.model and args.retrain:
        raise UsageError("--model and --retrain contradict each other", hint="give one")
    out = Path(args.out)
    start = time.perf_counter()

    def step(k: int, text: str) -> None:
        print(f"[{k}/{STEPS}] {text} ({time.perf_counter() - start:.0f} s so far)", flush=True)

    step(1, f"model: the {PRESET} preset over the built-in part families")
    model, how = demo_model(args.model, args.retrain)
    print(f"      {how}: {model}", flush=True)
    recipe = demo_recipe()
    step(2, f"check the demo recipe {recipe}")
    loaded = load_recipe_and_model(recipe, model)
    print(f"      {check_summary(loaded)}", flush=True)
    step(3, f"render {args.count} labelled images")
    dataset = render_dataset(recipe, model, out / "dataset", args.count, args.force)
    print(f"      {dataset.summary}", flush=True)
    step(4, "preview sheet: masks, boxes with class names, depth")
    preview = recipe_preview(loaded, min(args.count, 8)).save(out / "preview.png")
    step(5, "sweep sheets: the recipe's sweep block, and a latent grid between codes")
    sweeps = make_sweeps(loaded, out)
    step(6, "scene 0 as one GLB: a node per object, and the floor")
    glb = scene_glb(loaded, out / "scene.glb")
    print(f"done in {time.perf_counter() - start:.0f} s. The demo wrote:")
    rows = [("model", model), ("dataset", dataset.root),
            ("  COCO annotations", dataset.root / "annotations.json"),
            ("  factors", dataset.root / "factors.jsonl"), ("preview", preview),
            *[("sweep", p) for p in sweeps], ("scene mesh", glb)]
    for name, path in rows:
        print(f"  {name:20s} {path}")
    print("What to try next:")
    for line in next_steps(recipe, model, out, loaded.model.codebook):
        print(f"  {line}")
    return 0
