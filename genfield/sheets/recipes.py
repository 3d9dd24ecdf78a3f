"""Sheets of a recipe: sweeps of its numbers and a preview of its first images.

The recipe package says which scenes to draw (``sweep_frames`` gives the overrides of each
frame; ``draw_scene`` the concrete scene); this module renders them and lays them out.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from genfield.errors import UsageError
from genfield.sheets.layout import Sheet
from genfield.sheets.make import Sweep, preview_sheet, render_all


@dataclass(frozen=True)
class Loaded:
    """A checked recipe and the model it renders with."""

    recipe: Any  # genfield.recipe.Recipe
    model: Any  # genfield.field.Model (anything with .codebook and .bake)
    model_path: Path


def load_recipe_and_model(recipe_path: str | Path, model: str | Path | None = None) -> Loaded:
    """Check a recipe (against the model's code names) and load its model.

    ``model`` overrides the model file the recipe names.
    """
    from genfield.field.model import load_model
    from genfield.recipe import check_codes, load_recipe

    recipe = load_recipe(recipe_path, model=model)
    path = Path(model) if model is not None else recipe.model_path
    if path is None:
        raise UsageError("the recipe names no model file", where=str(recipe_path),
                         hint="add a line 'model \"FILE.gfm\"' to it, or give --model FILE")
    loaded = load_model(path)
    check_codes(recipe, loaded.codebook)  # unknown code names, with their recipe positions
    return Loaded(recipe, loaded, Path(path))


def _value_text(value: float, info: Any) -> str:
    """A swept value as an axis label, in the recipe's own units (45deg, 3cm)."""
    from genfield.recipe.values import show

    return str(int(round(value))) if info.whole else show(value, info.unit)


def sweeps_of(loaded: Loaded, frames: Sequence[Any], seed: int, source: str) -> list[Sweep]:
    """Render frames (``genfield.recipe.sweep_frames``), one Sweep per sweep block."""
    from genfield.recipe import draw_scene

    groups: dict[str, list[Any]] = {}
    for f in frames:
        groups.setdefault(f.sweep, []).append(f)
    params = loaded.recipe.params
    out: list[Sweep] = []
    for name, group in groups.items():
        names = list(group[0].overrides)
        scenes = [draw_scene(loaded.recipe, loaded.model.codebook, seed, f.index,
                             overrides=f.overrides) for f in group]
        outputs = render_all(loaded.model, scenes, f"sweep {name or ' & '.join(names)}",
                             loaded.recipe.dataset.detail)
        rows = 1 + max(f.cell[0] for f in group)
        cols = 1 + max(f.cell[1] for f in group)
        cells = {f.cell: f for f in group}
        if rows > 1:  # a grid: first parameter down the rows, second across
            p, q = names
            row_labels = tuple(_value_text(cells[(r, 0)].overrides[p], params[p]) for r in range(rows))
            col_labels = tuple(_value_text(cells[(0, c)].overrides[q], params[q]) for c in range(cols))
            row_title, col_title = p, q
        else:  # a strip of one parameter, or of two walked together
            row_labels, row_title = (), ""
            col_title = " & ".join(names)
            col_labels = tuple(
                ", ".join(_value_text(cells[(0, c)].overrides[n], params[n]) for n in names)
                for c in range(cols)
            )
        order = sorted(range(len(group)), key=lambda k: group[k].cell)
        title = f"{source}: sweep {name}" if name else source
        out.append(Sweep(
            scenes=tuple(scenes[k] for k in order), outputs=tuple(outputs[k] for k in order),
            factors=tuple(dict(group[k].overrides) for k in order), column_title=col_title,
            column_labels=col_labels, row_title=row_title, row_labels=row_labels, title=title,
            extra={"recipe": source, "sweep": name, "seed": seed,
                   "units": "metres and radians (the recipe's canonical units)"},
        ))
    return out


def recipe_sweep(loaded: Loaded, varies: Sequence[tuple[str, str]], *, zipped: bool = False,
                 seed: int | None = None, index: int = 0) -> list[Sweep]:
    """Sweeps of a recipe: of the --vary (parameter, values text) pairs, or (none given) of
    its sweep blocks."""
    from genfield.recipe import sweep_frames

    frames = sweep_frames(loaded.recipe, varies, zipped=zipped, index=index)
    seed = loaded.recipe.dataset.seed if seed is None else seed
    return sweeps_of(loaded, frames, seed, loaded.recipe.path.name)


def recipe_preview(loaded: Loaded, count: int = 16, *, seed: int | None = None,
                   style: str = "tint", columns: int = 4) -> Sheet:
    """A contact sheet of the recipe's first ``count`` images with their labels drawn on."""
    from genfield.recipe import draw_scene

    if count < 1:
        raise UsageError(f"--count must be >= 1, got {count}")
    recipe = loaded.recipe
    seed = recipe.dataset.seed if seed is None else seed
    count = min(count, recipe.dataset.count)
    scenes = [draw_scene(recipe, loaded.model.codebook, seed, i) for i in range(count)]
    outputs = render_all(loaded.model, scenes, "preview", recipe.dataset.detail)
    title = f"{recipe.path.name}: images 0-{count - 1}, seed {seed}"
    return preview_sheet(scenes, outputs, title=title, style=style, columns=columns)
