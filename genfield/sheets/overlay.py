"""Label overlays a person can check at a glance: tinted masks or outlines, boxes with class
names, and a depth thumbnail with its colour scale.

Pure image work on arrays: an sRGB 8-bit image (H, W, 3), an instance id map (H, W) with 0 for
the background (as ``RenderOutput.instance_ids`` and the dataset's ``masks/`` give), and a
depth map (H, W) in metres with inf where nothing was hit.
"""

from __future__ import annotations

import colorsys
from dataclasses import dataclass

import numpy as np
from PIL import Image, ImageDraw
from skimage.segmentation import find_boundaries

from genfield.sheets.layout import BACKGROUND, INK, draw_text, text_size

NO_HIT = (150, 150, 150)  # depth thumbnail colour where nothing was hit

# Depth colour ramp of our own: near is light and warm, far is dark and cool, so that the
# order reads even in grey. Anchors in sRGB 8-bit, interpolated linearly between them.
DEPTH_RAMP = np.array(
    [[255, 244, 170], [240, 160, 70], [190, 70, 90], [90, 40, 120], [25, 25, 70]], dtype=np.float64
)


def instance_colour(instance_id: int) -> tuple[int, int, int]:
    """A saturated colour for an instance id, stable across images.

    Hues step by the golden-ratio fraction of a turn, so consecutive ids land far apart on the
    colour wheel (common practice for label palettes).
    """
    hue = (0.11 + 0.618033988749895 * instance_id) % 1.0
    r, g, b = colorsys.hsv_to_rgb(hue, 0.85, 0.95)
    return int(round(255 * r)), int(round(255 * g)), int(round(255 * b))


@dataclass(frozen=True)
class Box:
    """A box in pixel edges, (x0, y0) inclusive and (x1, y1) exclusive, as COCO's [x, y, w, h]
    = [x0, y0, x1 - x0, y1 - y0] (COCO data format, object detection)."""

    x0: int
    y0: int
    x1: int
    y1: int

    @property
    def xywh(self) -> tuple[int, int, int, int]:
        return self.x0, self.y0, self.x1 - self.x0, self.y1 - self.y0


def mask_boxes(instance_ids: np.ndarray) -> dict[int, Box]:
    """The tight box of every non-zero id in an (H, W) id map."""
    ids = np.asarray(instance_ids)
    out: dict[int, Box] = {}
    for oid in np.unique(ids):
        if oid == 0:
            continue
        rows = np.flatnonzero((ids == oid).any(axis=1))
        cols = np.flatnonzero((ids == oid).any(axis=0))
        out[int(oid)] = Box(int(cols[0]), int(rows[0]), int(cols[-1]) + 1, int(rows[-1]) + 1)
    return out


def tint_masks(image: np.ndarray, instance_ids: np.ndarray, strength: float = 0.45) -> np.ndarray:
    """Blend each instance's colour over its pixels: out = (1 - a) image + a colour.

    image: (H, W, 3) uint8; instance_ids: (H, W) int; returns (H, W, 3) uint8.
    """
    if not 0.0 <= strength <= 1.0:
        raise ValueError(f"strength must be in [0, 1], got {strength}")
    ids = np.asarray(instance_ids)
    out = np.asarray(image, dtype=np.float64).copy()
    for oid in np.unique(ids):
        if oid == 0:
            continue
        sel = ids == oid
        out[sel] = (1.0 - strength) * out[sel] + strength * np.array(instance_colour(int(oid)))
    return np.round(out).astype(np.uint8)


def outline_masks(image: np.ndarray, instance_ids: np.ndarray) -> np.ndarray:
    """Draw each instance's boundary (the mask pixels next to another label) in its colour.

    Boundaries come from scikit-image's ``find_boundaries(mode="inner")``: pixels of a label
    with a 4-neighbour of a different label.
    """
    ids = np.asarray(instance_ids)
    out = np.asarray(image, dtype=np.uint8).copy()
    edge = find_boundaries(ids, connectivity=1, mode="inner") & (ids != 0)
    for oid in np.unique(ids[edge]):
        out[edge & (ids == oid)] = instance_colour(int(oid))
    return out


def draw_boxes(image: np.ndarray, boxes: dict[int, Box], names: dict[int, str],
               font_size: int = 9) -> np.ndarray:
    """Draw each box in its instance colour with its class name on a tag at its top-left."""
    canvas = Image.fromarray(np.asarray(image, dtype=np.uint8))
    draw = ImageDraw.Draw(canvas)
    for oid, box in sorted(boxes.items()):
        colour = instance_colour(oid)
        draw.rectangle((box.x0, box.y0, box.x1 - 1, box.y1 - 1), outline=colour, width=1)
        name = names.get(oid, str(oid))
        if not name:
            continue
        w, h = text_size(name, font_size)
        tag_y = box.y0 - h - 1 if box.y0 - h - 1 >= 0 else box.y0
        tag_x = min(box.x0, max(0, canvas.width - w - 2))
        draw.rectangle((tag_x, tag_y, tag_x + w + 1, tag_y + h), fill=colour)
        draw_text(canvas, (tag_x + 1, tag_y), name, size=font_size, fill=INK)
    return np.asarray(canvas)


def label_overlay(image: np.ndarray, instance_ids: np.ndarray, names: dict[int, str], *,
                  style: str = "tint") -> np.ndarray:
    """The image with masks (``style`` "tint" or "outline") and named boxes drawn on it."""
    if style == "tint":
        marked = tint_masks(image, instance_ids)
    elif style == "outline":
        marked = outline_masks(image, instance_ids)
    else:
        raise ValueError(f"style must be 'tint' or 'outline', got {style!r}")
    return draw_boxes(marked, mask_boxes(instance_ids), names)


def depth_colours(depth: np.ndarray, near: float, far: float) -> np.ndarray:
    """Depth (H, W) metres to (H, W, 3) uint8 through DEPTH_RAMP; inf or NaN -> NO_HIT."""
    d = np.asarray(depth, dtype=np.float64)
    hit = np.isfinite(d)
    span = max(far - near, 1e-9)
    u = np.clip((np.where(hit, d, near) - near) / span, 0.0, 1.0) * (len(DEPTH_RAMP) - 1)
    lo = np.minimum(np.floor(u).astype(int), len(DEPTH_RAMP) - 2)
    frac = (u - lo)[..., None]
    rgb = (1.0 - frac) * DEPTH_RAMP[lo] + frac * DEPTH_RAMP[lo + 1]
    out = np.round(rgb).astype(np.uint8)
    out[~hit] = NO_HIT
    return out


def _resize(image: np.ndarray, size: tuple[int, int]) -> np.ndarray:
    """Nearest-neighbour resize to (width, height): no blending across depth edges."""
    return np.asarray(Image.fromarray(image).resize(size, Image.Resampling.NEAREST))


def depth_thumbnail(depth: np.ndarray, width: int, *, near: float | None = None,
                    far: float | None = None, font_size: int = 9) -> np.ndarray:
    """A depth map shrunk to ``width`` pixels across, with a colour scale bar and its range
    in metres underneath. Returns (h, width, 3) uint8.

    near/far default to the smallest and largest finite depth of the map.
    """
    d = np.asarray(depth, dtype=np.float64)
    finite = d[np.isfinite(d)]
    if near is None:
        near = float(finite.min()) if finite.size else 0.0
    if far is None:
        far = float(finite.max()) if finite.size else near + 1.0
    lo, hi = float(near), float(far)
    if hi <= lo:
        hi = lo + 1e-3
    h = max(1, round(width * d.shape[0] / d.shape[1]))
    thumb = _resize(depth_colours(d, lo, hi), (width, h))
    bar_h = 5
    bar = depth_colours(np.broadcast_to(np.linspace(lo, hi, width), (bar_h, width)), lo, hi)
    line = text_size("0", font_size)[1]
    left, right = f"{lo:.2f}", f"{hi:.2f} m"
    side_by_side = text_size(left, font_size)[0] + 4 + text_size(right, font_size)[0] <= width
    lines = 1 if side_by_side else 2  # the far end goes under the near end when narrow
    canvas = Image.new("RGB", (width, h + 2 + bar_h + 1 + lines * line), BACKGROUND)
    canvas.paste(Image.fromarray(thumb), (0, 0))
    canvas.paste(Image.fromarray(np.ascontiguousarray(bar)), (0, h + 2))
    y = h + 2 + bar_h + 1
    draw_text(canvas, (0, y), left, size=font_size)
    y += 0 if side_by_side else line
    draw_text(canvas, (max(0, width - text_size(right, font_size)[0]), y), right, size=font_size)
    return np.asarray(canvas)


def labelled_tile(image: np.ndarray, instance_ids: np.ndarray, depth: np.ndarray,
                  names: dict[int, str], *, style: str = "tint") -> np.ndarray:
    """One preview tile: the overlaid image, and beside it the depth thumbnail at half width.

    The depth scale runs from the nearest surface to the farthest object pixel, so the objects
    keep the colour range even when a floor reaches far behind them (it shows as the far end).
    Returns (H, W + W // 2 + 2, 3) uint8 for an (H, W) image.
    """
    marked = label_overlay(image, instance_ids, names, style=style)
    h, w = marked.shape[:2]
    d = np.asarray(depth)
    on_object = np.isfinite(d) & (np.asarray(instance_ids) > 0)
    far = float(d[on_object].max()) if on_object.any() else None
    thumb = depth_thumbnail(d, max(16, w // 2), far=far)
    th = min(thumb.shape[0], h)
    canvas = np.empty((h, w + 2 + thumb.shape[1], 3), dtype=np.uint8)
    canvas[:] = BACKGROUND
    canvas[:, :w] = marked
    canvas[:th, w + 2 :] = thumb[:th]
    return canvas
