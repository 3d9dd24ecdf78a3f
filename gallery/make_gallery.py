"""Regenerate the gallery from recipes/: small PNGs here, and the README section showing them.

For every recipe in recipes/ (not the included files in its sub-folders) this renders a
preview of its first images with their labels drawn on, and one sheet per sweep block. The
models are the demo's quick preset (workshop families) and the same settings over the kitchen
families (gallery/kitchen-quick.toml), each trained on first use and cached like the demo's;
a recipe is rendered with the first model that holds every code name it uses. Sheets are
stored with a 256-colour palette to keep the committed files small. Then it rewrites the
part of README.md between the gallery markers: each picture with the recipe lines behind it.

    python gallery/make_gallery.py [--model MODEL ...] [--recipes DIR] [--no-readme]

Run by ``make gallery``.
"""

from __future__ import annotations

import argparse
import logging
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from PIL import Image

ROOT = Path(__file__).resolve().parent.parent
GALLERY = ROOT / "gallery"
README = ROOT / "README.md"
START = "<!-- gallery:start (written by `make gallery`; edits here are overwritten) -->"
END = "<!-- gallery:end -->"
PLACEHOLDER = "<!-- gallery: pictures made by `make gallery` from recipes/ go here -->"
PREVIEW_COUNT = 4  # images per preview
MAX_FRAMES = 8  # frames per sweep sheet; longer sweeps keep every k-th value
CONFIGS = ("quick", str(GALLERY / "kitchen-quick.toml"))  # training configs of the models

log = logging.getLogger("make_gallery")


@dataclass(frozen=True)
class Picture:
    """One gallery picture: its file, a caption, and the recipe lines behind it."""

    path: Path
    caption: str
    recipe: Path
    lines: str
    model: str = ""  # which model rendered it: a training config's name, or a file name


def block_lines(recipe: Path, kinds: tuple[str, ...], label: str | None = None) -> str:
    """The source lines of the recipe's top-level blocks of these kinds (or the one labelled)."""
    from genfield.recipe import ast, parse_text

    text = recipe.read_text(encoding="utf-8")
    source = text.splitlines()
    program = parse_text(text, str(recipe))
    chunks = []
    for st in program.statements:
        if isinstance(st, ast.Block) and st.kind in kinds and (label is None or st.label == label):
            chunks.append("\n".join(source[st.pos.line - 1 : st.end_line]))
    return "\n\n".join(chunks)


def save_small(image: np.ndarray, path: Path) -> Path:
    """PNG with an adaptive 256-colour palette (no dithering), about a third of the RGB size;
    written to a temporary name and renamed."""
    quantized = Image.fromarray(image).quantize(colors=256, method=Image.Quantize.MEDIANCUT,
                                                dither=Image.Dither.NONE)
    tmp = path.with_name(f".{path.name}.tmp")
    quantized.save(tmp, format="PNG", optimize=True)
    tmp.replace(path)
    return path


def thin(sweep, most: int):
    """A strip of at most ``most`` frames: every k-th frame of a longer strip (grids stay)."""
    from dataclasses import replace

    n = len(sweep.outputs)
    if sweep.row_labels or n <= most:
        return sweep
    keep = list(range(0, n, -(-n // most)))
    return replace(sweep, scenes=tuple(sweep.scenes[k] for k in keep),
                   outputs=tuple(sweep.outputs[k] for k in keep),
                   factors=tuple(sweep.factors[k] for k in keep),
                   column_labels=tuple(sweep.column_labels[k] for k in keep))


def pick_model(recipe: Path, models: list[tuple[Path, object]]):
    """A Loaded recipe with the first model whose code table has every name it uses.

    models: (file, loaded model) pairs, in order of preference.
    """
    from genfield.errors import RecipeError
    from genfield.recipe import check_codes, load_recipe
    from genfield.sheets.recipes import Loaded

    misses = []
    for path, model in models:
        spec = load_recipe(recipe, model=path)
        try:
            check_codes(spec, model.codebook)
        except RecipeError as err:
            misses.append(err.one_line())
            continue
        return Loaded(spec, model, path)
    raise SystemExit(f"{recipe.name}: no model holds its codes: {'; '.join(misses)}")


def pictures_of(loaded, model_label: str) -> list[Picture]:
    """Render one recipe's preview and sweep sheets into gallery/."""
    from genfield.sheets.recipes import recipe_preview, recipe_sweep

    recipe = loaded.recipe.path.resolve()
    stem = recipe.stem
    rel = recipe.relative_to(ROOT) if recipe.is_relative_to(ROOT) else recipe
    out = [Picture(
        save_small(recipe_preview(loaded, PREVIEW_COUNT, columns=PREVIEW_COUNT).image,
                   GALLERY / f"{stem}.png"),
        f"`{rel}`: its first {PREVIEW_COUNT} images, masks tinted, boxes named, depth beside",
        recipe, block_lines(recipe, ("object",)), model_label)]
    for sweep in recipe_sweep(loaded, []) if loaded.recipe.sweeps else []:
        name = sweep.extra["sweep"]
        sheet = thin(sweep, MAX_FRAMES).sheet()
        out.append(Picture(save_small(sheet.image, GALLERY / f"{stem}-{name}.png"),
                           f"`{rel}`: sweep `{name}`", recipe,
                           block_lines(recipe, ("sweep",), name), model_label))
    return out


def readme_section(pictures: list[Picture]) -> str:
    lines = [START, "## Gallery", "",
             "Made by `make gallery` from the recipes in `recipes/`, with models trained by the "
             "quick preset (the workshop families) and by `gallery/kitchen-quick.toml` (the "
             "same settings over the kitchen families); under each picture, the recipe lines "
             "that made it.", ""]
    for p in pictures:
        caption = f"{p.caption} (model: {p.model})" if p.model else p.caption
        lines += [f"![{p.path.stem}]({p.path.relative_to(ROOT).as_posix()})", "", caption, "",
                  "<details><summary>recipe lines</summary>", "", "```", p.lines, "```", "",
                  "</details>", ""]
    lines.append(END)
    return "\n".join(lines)


def write_readme(section: str, readme: Path = README) -> None:
    """Put the section between the markers (or in place of the first placeholder)."""
    text = readme.read_text(encoding="utf-8")
    if START in text and END in text:
        head, rest = text.split(START, 1)
        text = head + section + rest.split(END, 1)[1]
    elif PLACEHOLDER in text:
        text = text.replace(PLACEHOLDER, section)
    else:
        raise SystemExit(f"{readme.name} has neither the gallery markers nor {PLACEHOLDER!r}")
    tmp = readme.with_name(f".{readme.name}.tmp")
    tmp.write_text(text, encoding="utf-8")
    tmp.replace(readme)


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--model", type=Path, action="append",
                   help="model file (repeatable; default: the cached quick-preset models)")
    p.add_argument("--recipes", type=Path, default=ROOT / "recipes", help="folder of recipes")
    p.add_argument("--no-readme", action="store_true", help="leave README.md as it is")
    args = p.parse_args(argv)
    logging.basicConfig(level=logging.INFO, format="make_gallery: %(message)s", stream=sys.stderr)
    from genfield.commands.demo import cached_model
    from genfield.field.model import load_model

    labels = {path: path.name for path in args.model or []}
    for config in CONFIGS if not labels else ():
        path, how = cached_model(config)
        log.info("%s: %s", how, path)
        labels[path] = Path(config).stem
    models = [(path, load_model(path)) for path in labels]
    pictures: list[Picture] = []
    for recipe in sorted(args.recipes.glob("*.gfr")):
        loaded = pick_model(recipe, models)
        log.info("rendering %s with %s", recipe.name, loaded.model_path.name)
        pictures += pictures_of(loaded, labels[loaded.model_path])
    total = sum(pic.path.stat().st_size for pic in pictures)
    for pic in pictures:
        log.info("%-40s %6.1f KB", pic.path.name, pic.path.stat().st_size / 1024)
    log.info("%d pictures, %.0f KB in all", len(pictures), total / 1024)
    if not args.no_readme:
        write_readme(readme_section(pictures))
    return 0


if __name__ == "__main__":
    sys.exit(main())
