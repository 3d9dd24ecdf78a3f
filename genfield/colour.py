"""Colour conventions: sources and files are sRGB, the field and the renderer are linear.

The transfer functions are those of IEC 61966-2-1 (sRGB): linear = ((c + 0.055) / 1.055)^2.4
above 0.04045 and c / 12.92 below; the inverse uses the threshold 0.0031308.
"""

from __future__ import annotations

import numpy as np


def srgb_to_linear(c: np.ndarray) -> np.ndarray:
    """sRGB values in [0, 1] to linear RGB, same shape, float."""
    c = np.clip(np.asarray(c, dtype=np.float64), 0.0, 1.0)
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def linear_to_srgb(c: np.ndarray) -> np.ndarray:
    """Linear RGB (clipped to [0, 1]) to sRGB values in [0, 1], same shape, float."""
    c = np.clip(np.asarray(c, dtype=np.float64), 0.0, 1.0)
    return np.where(c <= 0.0031308, 12.92 * c, 1.055 * np.power(c, 1.0 / 2.4) - 0.055)


def to_srgb8(linear: np.ndarray) -> np.ndarray:
    """Linear RGB to 8-bit sRGB (rounded), the encoding of every PNG genfield writes."""
    return np.round(linear_to_srgb(linear) * 255.0).astype(np.uint8)


def parse_hex(text: str) -> tuple[float, float, float]:
    """``#rrggbb`` to sRGB floats in [0, 1]; raises ValueError on anything else."""
    if len(text) != 7 or text[0] != "#":
        raise ValueError(f"expected a colour like #a1b2c3, got {text!r}")
    try:
        return tuple(int(text[i : i + 2], 16) / 255.0 for i in (1, 3, 5))  # type: ignore[return-value]
    except ValueError:
        raise ValueError(f"expected a colour like #a1b2c3, got {text!r}") from None
