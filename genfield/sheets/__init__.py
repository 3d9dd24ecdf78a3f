"""Sheets that show what a recipe and a model make: strips and grids with axis labels
(sweeps), contact sheets with label overlays (previews), and a labelled grid of a model's
codes (``genfield inspect --sheet``).

``layout`` and ``overlay`` are pure image work on numpy arrays; ``studio`` builds the fixed
one-object scene of latent sweeps; ``make`` renders scenes and assembles the sheets.
"""

from __future__ import annotations

from genfield.sheets.layout import Sheet, TextMark, contact_sheet, grid_sheet, save_png
from genfield.sheets.overlay import (
    depth_thumbnail,
    label_overlay,
    labelled_tile,
    mask_boxes,
    outline_masks,
    tint_masks,
)

__all__ = [
    "Sheet",
    "TextMark",
    "contact_sheet",
    "depth_thumbnail",
    "grid_sheet",
    "label_overlay",
    "labelled_tile",
    "mask_boxes",
    "outline_masks",
    "save_png",
    "tint_masks",
]
