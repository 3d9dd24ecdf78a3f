"""The PNG encodings of a dataset: 8-bit sRGB images, 16-bit ids, 16-bit millimetre depth, normals.

PNG (ISO/IEC 15948) stores 16-bit grey samples big-endian; Pillow reads and writes them as
mode ``I;16``. Encoding uses Pillow's fixed defaults and no time chunk, so the same array
always gives the same bytes.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from PIL import Image

from genfield.dataset.layout import DEPTH_MAX_UNITS, DEPTH_METRES_PER_UNIT, DEPTH_NOTHING
from genfield.errors import DatasetError


def encode_png(array: np.ndarray) -> bytes:
    """PNG bytes of a (H, W, 3) uint8 or (H, W) uint16 array."""
    if array.dtype == np.uint8 and array.ndim == 3 and array.shape[2] == 3:
        image = Image.fromarray(np.ascontiguousarray(array))  # mode RGB
    elif array.dtype == np.uint16 and array.ndim == 2:
        image = Image.fromarray(np.ascontiguousarray(array))  # mode I;16
    else:
        raise ValueError(f"cannot encode an array of {array.dtype} {array.shape} as PNG")
    out = io.BytesIO()
    image.save(out, format="PNG")
    return out.getvalue()


def read_png(path: Path) -> np.ndarray:
    """A dataset PNG as an array: (H, W, 3) uint8 for colour, (H, W) uint16 for ids and depth."""
    try:
        with Image.open(path) as image:
            image.load()
            array = np.asarray(image)
    except (OSError, ValueError) as err:
        raise DatasetError(f"cannot read {path.name}: {err}", where=str(path),
                           hint="rerun 'genfield render' with --resume to redo broken files") from err
    if array.ndim == 2:
        return array.astype(np.uint16)  # some Pillow versions open 16-bit grey as 32-bit "I"
    return array


def depth_to_units(depth: np.ndarray) -> np.ndarray:
    """(H, W) float32 metres (inf = nothing hit) -> (H, W) uint16 millimetres (0 = nothing).

    Finite depths round to the nearest millimetre, at least 1 so a hit is never read as
    nothing, and saturate at 65535 mm.
    """
    finite = np.isfinite(depth)
    units = np.rint(np.where(finite, depth, 0.0) / DEPTH_METRES_PER_UNIT)  # (H, W)
    units = np.clip(units, 1, DEPTH_MAX_UNITS)
    return np.where(finite, units, DEPTH_NOTHING).astype(np.uint16)


def units_to_depth(units: np.ndarray) -> np.ndarray:
    """(H, W) uint16 millimetres -> (H, W) float32 metres, inf where nothing was hit."""
    metres = units.astype(np.float32) * np.float32(DEPTH_METRES_PER_UNIT)
    return np.where(units == DEPTH_NOTHING, np.float32(np.inf), metres).astype(np.float32)


def normals_to_rgb8(normals: np.ndarray) -> np.ndarray:
    """(H, W, 3) unit world normals (0 where none) -> (H, W, 3) uint8, c = round(255 (n + 1) / 2).

    Pixels with no surface are (0, 0, 0), which no unit normal encodes to (it would need
    every component near -1).
    """
    none = ~np.any(normals != 0.0, axis=-1)  # (H, W)
    rgb = np.rint((np.clip(normals, -1.0, 1.0) + 1.0) * 127.5).astype(np.uint8)  # (H, W, 3)
    rgb[none] = 0
    return rgb


def rgb8_to_normals(rgb: np.ndarray) -> np.ndarray:
    """The inverse of ``normals_to_rgb8`` up to 8-bit quantisation, (H, W, 3) float32."""
    n = rgb.astype(np.float32) / 127.5 - 1.0
    n[~np.any(rgb != 0, axis=-1)] = 0.0
    return n
