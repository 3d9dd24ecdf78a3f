"""Render scenes and assemble them into sheets: sweeps, previews, and a model's code sheet.

This is where the sheets meet the renderer; ``layout`` and ``overlay`` stay pure image work.
Rendering goes one scene at a time (the renderer chunks its own rays), with a progress bar on
stderr.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from tqdm import tqdm

from genfield.render.options import RenderOptions
from genfield.render.output import RenderOutput
from genfield.scene import Scene
from genfield.sheets.layout import Sheet, contact_sheet, grid_sheet, save_png
from genfield.sheets.overlay import labelled_tile
from genfield.sheets.studio import LatentPlan, named_code, studio_scene


def render_all(model: Any, scenes: Sequence[Scene], what: str,
               detail: float = RenderOptions.cells_per_pixel) -> list[RenderOutput]:
    """Render every scene with ``genfield.render.render_scene``, showing progress.

    Sheets show visible masks only, so the amodal masks (one more pass per object) are skipped.
    ``detail``: grid cells per pixel, as a recipe's dataset sets it (so a preview looks like
    the dataset).
    """
    from genfield.render.renderer import render_scene

    options = RenderOptions(amodal=False, cells_per_pixel=detail)
    return [render_scene(model, s, options=options)
            for s in tqdm(scenes, desc=what, unit="image", leave=False)]


@dataclass(frozen=True)
class Sweep:
    """Rendered frames of a sweep, row-major, with what varied in each.

    A strip has no row axis (row_labels empty, one row); a grid has ``len(row_labels)`` rows of
    ``len(column_labels)`` frames.
    """

    scenes: tuple[Scene, ...]
    outputs: tuple[RenderOutput, ...]
    factors: tuple[dict[str, Any], ...]  # per frame: parameter -> value it was set to
    column_title: str
    column_labels: tuple[str, ...]
    row_title: str = ""
    row_labels: tuple[str, ...] = ()
    title: str = ""
    extra: dict[str, Any] = field(default_factory=dict)  # written into every frame's JSON

    def __post_init__(self) -> None:
        rows = max(1, len(self.row_labels))
        if len(self.outputs) != rows * len(self.column_labels):
            raise ValueError(
                f"{len(self.outputs)} frames do not fill {rows} x {len(self.column_labels)}"
            )

    def images(self) -> list[np.ndarray]:
        """(H, W, 3) uint8 sRGB of each frame, row-major."""
        return [o.srgb8 for o in self.outputs]

    def sheet(self, font_size: int = 12) -> Sheet:
        cols = len(self.column_labels)
        images = self.images()
        tiles = [images[r * cols : (r + 1) * cols] for r in range(len(images) // cols)]
        return grid_sheet(
            tiles, column_labels=list(self.column_labels),
            row_labels=list(self.row_labels) or None, column_title=self.column_title,
            row_title=self.row_title, title=self.title, font_size=font_size,
        )

    def write_frames(self, folder: str | Path) -> list[Path]:
        """``NNNN.png`` (sRGB) and ``NNNN.json`` (factors and the whole scene) for each frame."""
        folder = Path(folder)
        folder.mkdir(parents=True, exist_ok=True)
        cols = len(self.column_labels)
        written: list[Path] = []
        for k, (scene, output, factors) in enumerate(
            zip(self.scenes, self.outputs, self.factors, strict=True)
        ):
            row, col = divmod(k, cols)
            written.append(save_png(output.srgb8, folder / f"{k:04d}.png"))
            record = {"frame": k, "row": row, "column": col, "factors": factors,
                      **self.extra, "scene": scene.to_dict()}
            path = folder / f"{k:04d}.json"
            tmp = path.with_name(f".{path.name}.tmp")
            tmp.write_text(json.dumps(record, indent=1, sort_keys=True, default=_jsonable) + "\n")
            tmp.replace(path)
            written.append(path)
        return written


def _jsonable(value: Any) -> Any:
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    raise TypeError(f"{type(value).__name__} is not JSON-able")


def latent_sweep(model: Any, plan: LatentPlan) -> Sweep:
    """Render a latent plan (see ``genfield.sheets.studio.latent_plan``) in the studio."""
    outputs = render_all(model, plan.scenes, "latent sweep")
    factors = tuple(dict(s.values) for s in plan.scenes)
    return Sweep(plan.scenes, tuple(outputs), factors, plan.column_title, plan.column_labels,
                 plan.row_title, plan.row_labels)


def preview_tiles(scenes: Sequence[Scene], outputs: Sequence[RenderOutput],
                  style: str = "tint") -> tuple[list[np.ndarray], list[str]]:
    """A labelled tile (overlay + depth thumbnail) and a caption for each rendered scene."""
    tiles, captions = [], []
    for scene, out in zip(scenes, outputs, strict=True):
        names = {o.id: o.label for o in scene.objects}
        tiles.append(labelled_tile(out.srgb8, out.instance_ids, out.depth, names, style=style))
        visible = len(set(np.unique(out.instance_ids).tolist()) - {0})
        captions.append(f"#{scene.index}: {visible}/{len(scene.objects)} visible")
    return tiles, captions


def preview_sheet(scenes: Sequence[Scene], outputs: Sequence[RenderOutput], *, title: str = "",
                  style: str = "tint", columns: int = 4) -> Sheet:
    """A contact sheet of rendered scenes with their label overlays."""
    tiles, captions = preview_tiles(scenes, outputs, style)
    return contact_sheet(tiles, captions, columns=columns, title=title)


def code_scenes(codebook: Any, size: int = 96) -> list[Scene]:
    """The studio scene of every named code pair of a code book, in table order."""
    return [
        studio_scene(named_code(codebook, "shape", name), named_code(codebook, "appearance", name),
                     label=family, size=size, index=i)
        for i, (name, family) in enumerate(zip(codebook.names, codebook.families, strict=True))
    ]


def code_sheet(model: Any, *, size: int = 96, columns: int = 8, title: str = "") -> Sheet:
    """Every named code of a model rendered in the studio, captioned with its name."""
    scenes = code_scenes(model.codebook, size)
    if not scenes:
        raise ValueError("the model has no named codes")
    outputs = render_all(model, scenes, "codes")
    captions = list(model.codebook.names)
    return contact_sheet([o.srgb8 for o in outputs], captions, columns=columns, title=title)


def write_code_sheet(model_path: str | Path, out: str | Path, *, size: int = 96,
                     columns: int = 8) -> Path:
    """``genfield inspect MODEL --sheet OUT``: the code sheet of a model file, as a PNG."""
    from genfield.field.model import load_model

    model = load_model(model_path)
    title = f"{Path(model_path).name}: {len(model.codebook.names)} named codes"
    return code_sheet(model, size=size, columns=columns, title=title).save(out)
