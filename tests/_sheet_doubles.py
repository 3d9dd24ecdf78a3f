"""A stand-in model for sheet and sweep tests: analytic geometry, codes in a code book.

Shapes come from ``genfield.render.analytic`` (exact SDFs, no training). The shape code picks
a solid as AnalyticModel does (largest entry); the appearance code *blends* the solids' colours
linearly by its (clipped, normalised) entries, so that an appearance interpolation has a
known answer: the albedo moves on the straight line from A's colour to B's.
"""

from __future__ import annotations

import numpy as np

from genfield.colour import srgb_to_linear
from genfield.field.codebook import CodeBook
from genfield.field.grid import FieldGrid, grid_points
from genfield.render.analytic import AnalyticModel, demo_shapes


class BlendModel:
    """``bake`` and ``codebook`` over the analytic demo solids (ball, brick, ring, post, pair)."""

    def __init__(self) -> None:
        self.shapes = demo_shapes()
        self.inner = AnalyticModel(self.shapes)
        n = len(self.shapes)
        eye = np.eye(n, dtype=np.float32)
        self.codebook = CodeBook(
            names=tuple(s.name for s in self.shapes), families=("analytic",) * n,
            shape=eye, appearance=eye, prior_weights=np.ones(1),
            prior_means=np.zeros((1, 2 * n)), prior_chols=np.eye(2 * n)[None],
        )

    def colour(self, name: str) -> np.ndarray:
        """Linear RGB (3,) albedo of a solid (the demo solids are one colour each)."""
        shape = self.shapes[self.codebook.index(name)]
        return srgb_to_linear(shape.colour_srgb(np.zeros((1, 3)))[0])

    def bake(self, shape: np.ndarray, appearance: np.ndarray, resolution: int) -> FieldGrid:
        grid = self.inner.bake(shape, self.inner.appearance_code(0), resolution)
        w = np.clip(np.asarray(appearance, np.float64), 0.0, None)
        w = w / w.sum() if w.sum() > 0 else w
        pts = grid_points(resolution).reshape(-1, 3)
        albedo = sum(wi * srgb_to_linear(s.colour_srgb(pts)) for wi, s in zip(w, self.shapes, strict=True))
        r = resolution
        return FieldGrid(grid.density, np.asarray(albedo, np.float32).reshape(r, r, r, 3))
