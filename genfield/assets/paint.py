"""Colour over the object frame: a base colour and one pattern, all in sRGB.

Patterns (each a pure function of the object-frame point, so any point of the cube has a colour):

- ``bands``: stripes across ``axis``; the second colour where frac(f (p . axis) + phase) < duty.
- ``split``: two-tone; the second colour where p . axis > offset.
- ``speckle``: round dots of the second colour, one candidate per cell of a lattice of spacing
  1 / f, kept with probability ``duty``, centred at a hashed point of the inner half of its cell
  with radius ``radius`` / f (<= 0.25 / f, so a dot never leaves its cell and one cell decides).
"""

from __future__ import annotations

import colorsys
from dataclasses import asdict, dataclass

import numpy as np

PATTERNS = ("bands", "split", "speckle")

_M1, _M2 = np.uint64(0xBF58476D1CE4E5B9), np.uint64(0x94D049BB133111EB)


def _hash_unit(keys: np.ndarray, salt: int) -> np.ndarray:
    """Uniform numbers in [0, 1) from integer lattice keys (N, 3) and a salt: the splitmix64
    finaliser (Steele, Lea and Flood 2014) over a mix of the three coordinates."""
    k = keys.astype(np.int64).astype(np.uint64)  # two's complement wrap keeps negatives distinct
    x = np.full(len(k), (salt * 0x9E3779B97F4A7C15) % (1 << 64), dtype=np.uint64)
    for axis, prime in enumerate((0x8DA6B343, 0xD8163841, 0xCB1AB31F)):
        x = x ^ (k[:, axis] * np.uint64(prime))
        x = (x ^ (x >> np.uint64(30))) * _M1
        x = (x ^ (x >> np.uint64(27))) * _M2
        x = x ^ (x >> np.uint64(31))
    return (x >> np.uint64(11)).astype(np.float64) / float(1 << 53)


@dataclass(frozen=True)
class Paint:
    """One asset's colour: ``base`` and ``second`` sRGB in [0, 1], a pattern and its numbers."""

    base: tuple[float, float, float]
    second: tuple[float, float, float]
    pattern: str  # one of PATTERNS
    axis: tuple[float, float, float]  # unit vector: band direction or split normal
    frequency: float  # bands per object unit / speckle cells per object unit
    phase: float  # band phase in [0, 1)
    duty: float  # share of the second colour (bands) or of cells with a dot (speckle)
    offset: float  # split plane position along axis, object units
    radius: float  # speckle dot radius in cells, <= 0.25
    salt: int  # speckle hash salt

    def srgb(self, points: np.ndarray) -> np.ndarray:
        """Colour at object-frame points (N, 3) -> (N, 3) float32 sRGB in [0, 1]."""
        p = np.asarray(points, dtype=np.float64).reshape(-1, 3)
        along = p @ np.asarray(self.axis)  # (N,)
        if self.pattern == "bands":
            second = np.mod(along * self.frequency + self.phase, 1.0) < self.duty
        elif self.pattern == "split":
            second = along > self.offset
        elif self.pattern == "speckle":
            cells = p * self.frequency  # (N, 3) in cell units
            key = np.floor(cells)
            centre = key + 0.25 + 0.5 * np.stack(
                [_hash_unit(key, self.salt + a) for a in range(3)], axis=1)  # (N, 3)
            has_dot = _hash_unit(key, self.salt + 3) < self.duty
            second = has_dot & (np.linalg.norm(cells - centre, axis=1) < self.radius)
        else:
            raise ValueError(f"unknown pattern {self.pattern!r}; known: {', '.join(PATTERNS)}")
        out = np.where(second[:, None], np.asarray(self.second), np.asarray(self.base))
        return out.astype(np.float32)

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class Palette:
    """HSV ranges a scenario draws base colours from (hue wraps, all in [0, 1])."""

    saturation: tuple[float, float]
    value: tuple[float, float]


def draw_paint(g: np.random.Generator, palette: Palette) -> Paint:
    """A random Paint: base colour from ``palette``, a second colour that differs from it in
    value by at least 0.25 (so every pattern is visible), a pattern chosen uniformly.

    Ranges: bands frequency 2-6 per unit, duty 0.2-0.5; split offset -0.4..0.4; speckle 6-14
    cells per unit, duty 0.3-0.8, radius 0.12-0.25 cell.
    """
    h = g.uniform(0.0, 1.0)
    s = g.uniform(*palette.saturation)
    v = g.uniform(*palette.value)
    base = colorsys.hsv_to_rgb(h, s, v)
    h2 = (h + g.uniform(-0.5, 0.5)) % 1.0
    v2 = v - g.uniform(0.25, 0.5) if v > 0.55 else v + g.uniform(0.25, 0.5)
    second = colorsys.hsv_to_rgb(h2, g.uniform(*palette.saturation), float(np.clip(v2, 0.0, 1.0)))
    pattern = PATTERNS[int(g.integers(len(PATTERNS)))]
    axis = g.normal(size=3)
    if pattern == "bands":  # stripes mostly across the height, as painted rings would be
        axis = axis * np.array([0.3, 0.3, 1.0])
    axis = axis / np.linalg.norm(axis)
    speckle = pattern == "speckle"
    return Paint(
        base=tuple(float(c) for c in base),  # type: ignore[arg-type]
        second=tuple(float(c) for c in second),  # type: ignore[arg-type]
        pattern=pattern,
        axis=tuple(float(c) for c in axis),  # type: ignore[arg-type]
        frequency=float(g.uniform(6.0, 14.0) if speckle else g.uniform(2.0, 6.0)),
        phase=float(g.uniform(0.0, 1.0)),
        duty=float(g.uniform(0.3, 0.8) if speckle else g.uniform(0.2, 0.5)),
        offset=float(g.uniform(-0.4, 0.4)),
        radius=float(g.uniform(0.12, 0.25)),
        salt=int(g.integers(0, 2**31)),
    )
