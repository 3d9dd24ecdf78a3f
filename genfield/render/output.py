"""What the renderer returns for one concrete scene: images and exact per-pixel labels.

The dataset writer, the sheets and the tests read this; none of them needs to know rays.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from genfield.colour import to_srgb8

# A pixel belongs to an object's visible mask when the objects together cover at least this
# much of it (alpha) and that object holds the largest share of the weight there.
MASK_ALPHA = 0.5


@dataclass(frozen=True)
class RenderOutput:
    """One rendered image with its labels; K objects, in the order of ``object_ids``.

    rgb: (H, W, 3) float32 linear RGB, objects composited over floor and backdrop.
    depth: (H, W) float32 camera z-depth in metres of the first surface (object or floor),
        inf where nothing is hit.
    alpha: (H, W) float32 total opacity of the objects (floor and backdrop excluded).
    weights: (K, H, W) float32 each object's share of the pixel's volume-rendering weight;
        summed over K it equals alpha.
    amodal: (K, H, W) bool, each object rendered alone (alpha >= MASK_ALPHA); None when the
        render was asked not to compute it.
    normals: (H, W, 3) float32 unit world-frame normals of the first surface, 0 where none.
    object_ids: (K,) the SceneObject ids.
    """

    rgb: np.ndarray
    depth: np.ndarray
    alpha: np.ndarray
    weights: np.ndarray
    amodal: np.ndarray | None
    normals: np.ndarray
    object_ids: tuple[int, ...]

    @property
    def srgb8(self) -> np.ndarray:
        """(H, W, 3) uint8 sRGB, the image as written to PNG."""
        return to_srgb8(self.rgb)

    @property
    def instance_ids(self) -> np.ndarray:
        """(H, W) uint16 instance id map, 0 = background."""
        h, w = self.alpha.shape
        out = np.zeros((h, w), dtype=np.uint16)
        if not self.object_ids:
            return out
        ids = np.asarray(self.object_ids, dtype=np.uint16)
        winner = ids[np.argmax(self.weights, axis=0)]
        covered = self.alpha >= MASK_ALPHA
        out[covered] = winner[covered]
        return out

    def visible_mask(self, k: int) -> np.ndarray:
        """(H, W) bool visible mask of the k-th object."""
        return self.instance_ids == self.object_ids[k]

    def visible_fraction(self) -> np.ndarray:
        """(K,) visible pixels / amodal pixels per object (0 where the amodal mask is empty)."""
        if self.amodal is None:
            raise ValueError("this render has no amodal masks; render with amodal=True")
        ids = self.instance_ids
        out = np.zeros(len(self.object_ids))
        for k, oid in enumerate(self.object_ids):
            full = int(self.amodal[k].sum())
            out[k] = (ids == oid).sum() / full if full else 0.0
        return out
