"""Rendered views of the field against the reference tracer: scores and the preview sheet.

Each training asset is shown in the studio scene (``genfield.sheets.studio``: one object at
the origin, a fixed light and backdrop) from ``views`` azimuths; the field is rendered by
``genfield.render.render_scene`` from its baked grids, the source by
``genfield.render.reference.trace_reference`` (exact hits of the SDF or the mesh). Scores:

- mask IoU of the field's mask (alpha >= MASK_ALPHA) against the traced object's pixels;
- PSNR = 10 log10(1 / MSE) of the sRGB-encoded images in [0, 1] (the pictures a person
  sees; the common practice for rendered-view comparisons, e.g. NeRF section 6).
"""

from __future__ import annotations

import logging
from pathlib import Path

import numpy as np

from genfield.colour import linear_to_srgb, to_srgb8
from genfield.field.evaluate import iou

log = logging.getLogger(__name__)

PREVIEW_ASSETS = 4  # rows of the preview sheet
PREVIEW_SIZE = 96  # pixels of each preview tile
ELEVATION_DEG = 25.0


def _scene(model, row: int, azimuth: float, size: int):
    from genfield.scene import CodeChoice
    from genfield.sheets.studio import studio_scene

    b = model.codebook
    shape = CodeChoice(tuple(float(v) for v in b.shape[row]), {"kind": "named", "name": b.names[row]})
    app = CodeChoice(tuple(float(v) for v in b.appearance[row]), {"kind": "named", "name": b.names[row]})
    return studio_scene(shape, app, azimuth_deg=azimuth, elevation_deg=ELEVATION_DEG, size=size)


def render_pair(model, row: int, asset, azimuth: float, size: int):
    """(field RenderOutput, ReferenceImage) of code row ``row`` and its source asset."""
    from genfield.render.cache import GridCache
    from genfield.render.options import RenderOptions
    from genfield.render.reference import trace_reference
    from genfield.render.renderer import render_scene

    scene = _scene(model, row, azimuth, size)
    threads = model.config.resolved_threads()
    # a private cache without disk: a model being trained changes under the same codes
    field = render_scene(model, scene, options=RenderOptions(threads=threads, disk_cache=False,
                                                             amodal=False),
                         cache=GridCache(64 << 20, disk=False))
    obj = scene.objects[0]
    ref = trace_reference(scene.camera, [(asset, obj.pose)], light=scene.light,
                          backdrop=scene.backdrop)
    return field, ref


def psnr(a_linear: np.ndarray, b_linear: np.ndarray) -> float:
    """PSNR in dB of two linear images, compared sRGB-encoded in [0, 1]."""
    mse = float(np.mean((linear_to_srgb(a_linear) - linear_to_srgb(b_linear)) ** 2))
    return float("inf") if mse == 0 else 10.0 * np.log10(1.0 / mse)


def score_views(model, assets: list, *, views: int, size: int) -> dict:
    """Mean and worst mask IoU and mean PSNR over every asset and view (JSON-able)."""
    from genfield.render.output import MASK_ALPHA

    ious, psnrs, worst = [], [], ("", 1.0)
    for row, asset in enumerate(assets):
        for k in range(views):
            field, ref = render_pair(model, row, asset, 30.0 + 360.0 * k / views, size)
            v = iou(field.alpha >= MASK_ALPHA, ref.instance == 1)
            ious.append(v)
            psnrs.append(psnr(field.rgb, ref.lit))
            if v < worst[1]:
                worst = (asset.name, v)
    return {"views_per_asset": views, "size": size,
            "mask_iou_mean": round(float(np.mean(ious)), 6),
            "mask_iou_worst": round(float(np.min(ious)), 6), "mask_iou_worst_asset": worst[0],
            "psnr_mean": round(float(np.mean(psnrs)), 4)}


def preview_rows(count: int, total: int) -> list[int]:
    """Up to ``count`` code rows spread evenly over ``total``."""
    return sorted({round(i * (total - 1) / max(1, count - 1)) for i in range(min(count, total))})


def write_preview(model, assets: list, path: Path, step: int) -> None:
    """A sheet of reference renders beside the field's for a few training assets."""
    from genfield.sheets.layout import grid_sheet

    rows = preview_rows(PREVIEW_ASSETS, len(assets))
    tiles = []
    for row in rows:
        field, ref = render_pair(model, row, assets[row], 30.0, PREVIEW_SIZE)
        tiles.append([to_srgb8(ref.lit), field.srgb8])
    sheet = grid_sheet(tiles, column_labels=["reference", "field"],
                       row_labels=[assets[r].name for r in rows], title=f"step {step}")
    sheet.save(path)
    log.info("preview sheet: %s", path)
