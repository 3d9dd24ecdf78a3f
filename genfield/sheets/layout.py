"""Sheets of equal-sized tiles: strips and grids with axis labels, contact sheets with captions.

Pure image work (numpy + pillow). Every sheet comes back as a ``Sheet``: the (H, W, 3) uint8
image plus where each tile and each piece of text was put, so that tests (and callers that
want to crop) can check the layout without reading pixels back as text.

Layout of a grid (all distances in pixels)::

    +-------------------------------------------+
    |                 title                     |
    |              column title                 |
    |        | col 0 | col 1 | col 2 |          |
    |  row   +-------+-------+-------+          |
    |  title | tile  | tile  | tile  |  row 0   <- row labels sit left of the tiles
    |        +-------+-------+-------+          |
    +-------------------------------------------+
"""

from __future__ import annotations

import os
import tempfile
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np
from PIL import Image, ImageDraw, ImageFont

BACKGROUND = (250, 250, 248)  # sheet paper, sRGB 8-bit
INK = (30, 30, 34)  # text
FAINT_INK = (110, 110, 118)  # axis titles and captions' second lines
GAP = 3  # pixels between tiles
PAD = 6  # pixels around text blocks and the sheet's edge


@dataclass(frozen=True)
class TextMark:
    """One piece of text on a sheet; box is (x0, y0, x1, y1) in sheet pixels, x1/y1 exclusive."""

    text: str
    box: tuple[int, int, int, int]
    role: str  # "title", "column-title", "row-title", "column", "row", "caption"


@dataclass(frozen=True)
class Sheet:
    """A composed sheet: image (H, W, 3) uint8 sRGB, tile boxes row-major, text marks."""

    image: np.ndarray
    tiles: tuple[tuple[int, int, int, int], ...]
    marks: tuple[TextMark, ...]

    def marks_of(self, role: str) -> list[TextMark]:
        return [m for m in self.marks if m.role == role]

    def save(self, path: str | Path) -> Path:
        return save_png(self.image, path)


def save_png(image: np.ndarray, path: str | Path) -> Path:
    """Write an (H, W, 3) or (H, W) uint8 image as PNG via a temporary name and a rename."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        Image.fromarray(np.ascontiguousarray(image)).save(tmp, format="PNG", optimize=True)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return path


@lru_cache(maxsize=8)
def font(size: int = 12) -> ImageFont.ImageFont | ImageFont.FreeTypeFont:
    """Pillow's bundled font at ``size`` pixels: the same glyphs on every machine."""
    return ImageFont.load_default(size=size)


def text_size(text: str, size: int = 12) -> tuple[int, int]:
    """(width, height) in pixels of ``text`` drawn at ``size``; height covers ascent and descent."""
    f = font(size)
    x0, _, x1, _ = f.getbbox(text)
    ascent, descent = f.getmetrics() if hasattr(f, "getmetrics") else (size, 0)
    return max(0, int(x1 - x0)), int(ascent + descent)


def draw_text(canvas: Image.Image, xy: tuple[int, int], text: str, *, size: int = 12,
              fill: tuple[int, int, int] = INK) -> tuple[int, int, int, int]:
    """Draw ``text`` with its top-left at ``xy``; returns the box it occupies."""
    w, h = text_size(text, size)
    x, y = xy
    f = font(size)
    left = f.getbbox(text)[0]
    ImageDraw.Draw(canvas).text((x - left, y), text, font=f, fill=fill)
    return (x, y, x + w, y + h)


def _vertical_text(text: str, size: int, fill: tuple[int, int, int]) -> Image.Image:
    """``text`` rotated a quarter turn anticlockwise (reads bottom to top), on the paper colour."""
    w, h = text_size(text, size)
    strip = Image.new("RGB", (max(w, 1), max(h, 1)), BACKGROUND)
    draw_text(strip, (0, 0), text, size=size, fill=fill)
    return strip.rotate(90, expand=True)


def fit_text(text: str, width: int, size: int = 12) -> str:
    """``text`` shortened with an ellipsis so that it fits ``width`` pixels."""
    if text_size(text, size)[0] <= width:
        return text
    while text and text_size(text + "...", size)[0] > width:
        text = text[:-1]
    return text + "..."


def _as_tile(tile: np.ndarray) -> np.ndarray:
    tile = np.asarray(tile)
    if tile.dtype != np.uint8 or tile.ndim != 3 or tile.shape[2] != 3:
        raise ValueError(f"a tile must be (H, W, 3) uint8, got {tile.shape} {tile.dtype}")
    return tile


def grid_sheet(tiles: list[list[np.ndarray]], *, column_labels: list[str] | None = None,
               row_labels: list[str] | None = None, column_title: str = "", row_title: str = "",
               title: str = "", font_size: int = 12) -> Sheet:
    """Tiles (rows x columns, each (h, w, 3) uint8, all the same size) with axis labels.

    A one-row grid is a strip. Column labels go above each column, row labels to the left of
    each row; the titles name the axes (a parameter's name) and the labels give its values.
    """
    if not tiles or not tiles[0]:
        raise ValueError("a sheet needs at least one tile")
    rows, cols = len(tiles), len(tiles[0])
    if any(len(r) != cols for r in tiles):
        raise ValueError("every row of a grid must have the same number of tiles")
    grid = [[_as_tile(t) for t in r] for r in tiles]
    th, tw = grid[0][0].shape[:2]
    if any(t.shape[:2] != (th, tw) for r in grid for t in r):
        raise ValueError("every tile of a sheet must have the same size")
    for labels, n, what in ((column_labels, cols, "column"), (row_labels, rows, "row")):
        if labels is not None and len(labels) != n:
            raise ValueError(f"{len(labels)} {what} labels for {n} {what}s")

    line = text_size("Ag", font_size)[1]
    top = PAD
    title_y = top
    top += (line + PAD) if title else 0
    column_title_y = top
    top += (line + 2) if column_title else 0
    column_label_y = top
    top += (line + 2) if column_labels else 0
    left = PAD
    row_title_x = left
    left += (line + PAD) if row_title else 0
    row_label_x = left
    label_w = max((text_size(s, font_size)[0] for s in row_labels or []), default=0)
    left += (label_w + PAD) if row_labels else 0

    grid_w = cols * tw + (cols - 1) * GAP
    grid_h = rows * th + (rows - 1) * GAP
    width = max(left + grid_w + PAD, 2 * PAD + text_size(title, font_size)[0])
    height = top + grid_h + PAD
    canvas = Image.new("RGB", (width, height), BACKGROUND)
    boxes: list[tuple[int, int, int, int]] = []
    marks: list[TextMark] = []
    for r in range(rows):
        for c in range(cols):
            x, y = left + c * (tw + GAP), top + r * (th + GAP)
            canvas.paste(Image.fromarray(grid[r][c]), (x, y))
            boxes.append((x, y, x + tw, y + th))

    def centred(text: str, x_mid: int, y: int, role: str, fill=INK) -> None:
        w = text_size(text, font_size)[0]
        box = draw_text(canvas, (int(x_mid - w / 2), y), text, size=font_size, fill=fill)
        marks.append(TextMark(text, box, role))

    if title:
        centred(title, width // 2, title_y, "title")
    if column_title:
        centred(column_title, left + grid_w // 2, column_title_y, "column-title", FAINT_INK)
    for c, text in enumerate(column_labels or []):
        centred(fit_text(text, tw, font_size), left + c * (tw + GAP) + tw // 2, column_label_y,
                "column")
    for r, text in enumerate(row_labels or []):
        w = text_size(text, font_size)[0]
        y = top + r * (th + GAP) + (th - line) // 2
        box = draw_text(canvas, (row_label_x + label_w - w, y), text, size=font_size)
        marks.append(TextMark(text, box, "row"))
    if row_title:
        strip = _vertical_text(row_title, font_size, FAINT_INK)
        y = top + (grid_h - strip.height) // 2
        canvas.paste(strip, (row_title_x, max(top, y)))
        y0 = max(top, y)
        marks.append(TextMark(row_title, (row_title_x, y0, row_title_x + strip.width,
                                          y0 + strip.height), "row-title"))
    return Sheet(np.asarray(canvas), tuple(boxes), tuple(marks))


def contact_sheet(tiles: list[np.ndarray], captions: list[str], *, columns: int = 4,
                  title: str = "", font_size: int = 11) -> Sheet:
    """Tiles in reading order, ``columns`` to a row, each with a one-line caption under it.

    Tiles may differ in size; each cell is as large as the largest tile (smaller ones are
    centred on the paper colour).
    """
    if not tiles:
        raise ValueError("a contact sheet needs at least one tile")
    if len(captions) != len(tiles):
        raise ValueError(f"{len(captions)} captions for {len(tiles)} tiles")
    if columns < 1:
        raise ValueError(f"columns must be >= 1, got {columns}")
    arrays = [_as_tile(t) for t in tiles]
    cell_h = max(a.shape[0] for a in arrays)
    cell_w = max(a.shape[1] for a in arrays)
    line = text_size("Ag", font_size)[1]
    cols = min(columns, len(arrays))
    rows = -(-len(arrays) // cols)
    top = PAD + ((line + PAD) if title else 0)
    row_h = cell_h + 2 + line + GAP
    width = max(2 * PAD + cols * cell_w + (cols - 1) * GAP,
                2 * PAD + text_size(title, font_size)[0])
    height = top + rows * row_h + PAD
    canvas = Image.new("RGB", (width, height), BACKGROUND)
    boxes: list[tuple[int, int, int, int]] = []
    marks: list[TextMark] = []
    if title:
        w = text_size(title, font_size)[0]
        marks.append(TextMark(title, draw_text(canvas, ((width - w) // 2, PAD), title,
                                               size=font_size), "title"))
    for i, (a, caption) in enumerate(zip(arrays, captions, strict=True)):
        r, c = divmod(i, cols)
        x0, y0 = PAD + c * (cell_w + GAP), top + r * row_h
        x = x0 + (cell_w - a.shape[1]) // 2
        y = y0 + (cell_h - a.shape[0]) // 2
        canvas.paste(Image.fromarray(a), (x, y))
        boxes.append((x, y, x + a.shape[1], y + a.shape[0]))
        text = fit_text(caption, cell_w, font_size)
        marks.append(TextMark(text, draw_text(canvas, (x0, y0 + cell_h + 2), text,
                                              size=font_size), "caption"))
    return Sheet(np.asarray(canvas), tuple(boxes), tuple(marks))
