"""How a scene is rendered: quality, speed and cache settings, one dataclass, checked once."""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

from genfield.errors import UsageError

# Grid sizes the renderer asks a model to bake when it chooses the resolution itself: 8 k + 1
# points per axis, so that every coarse cell of the skipping grid (4 fine cells) and of the
# bake's first lattice (stride 4) holds whole fine cells; rungs about sqrt(2) apart, so the
# nearest one is within about 19% of the detail asked for.
RESOLUTION_LADDER: tuple[int, ...] = (17, 25, 33, 49, 65, 97, 129)


@dataclass(frozen=True)
class RenderOptions:
    """Settings of ``render_scene``; every field is checked in ``__post_init__``."""

    threads: int = 2  # torch intra-op threads for the render (torch.set_num_threads)
    grid_resolution: int | None = None  # points per axis of baked grids; None: from screen size
    cells_per_pixel: float = 2.0  # with grid_resolution None: at least this many grid cells
    # across the object cube per pixel it spans on screen (twice the image's sampling rate: thin
    # walls of built-in parts, ~half a cell at 1 cell a pixel, broke up into holes)
    min_resolution: int = 17  # with grid_resolution None: the smallest grid baked
    max_resolution: int = 65  # with grid_resolution None: the largest grid baked
    step: float = 0.5  # ray step, in grid cells of the finest object the ray meets
    amodal: bool = True  # also compute each object's mask as if it were alone
    chunk_rays: int = 8192  # rays marched together; bounds the memory of one pass
    memory_cache_mb: float = 512.0  # bound of the in-memory cache of prepared grids
    disk_cache: bool = True  # keep baked grids of repeated codes on disk (models with .identity)
    disk_cache_mb: float = 2048.0  # bound of the disk cache; oldest files go first

    def __post_init__(self) -> None:
        def bad(name: str, want: str) -> UsageError:
            return UsageError(f"{want}, got {getattr(self, name)!r}", where=f"RenderOptions.{name}")

        for f in fields(self):
            value = getattr(self, f.name)
            if isinstance(value, float) and not math.isfinite(value):
                raise bad(f.name, "must be a finite number")
        if self.threads < 1:
            raise bad("threads", "must be >= 1")
        if self.grid_resolution is not None and self.grid_resolution < 5:
            raise bad("grid_resolution", "must be >= 5 grid points per axis, or None")
        if self.cells_per_pixel <= 0:
            raise bad("cells_per_pixel", "must be > 0")
        if self.min_resolution < 5:
            raise bad("min_resolution", "must be >= 5")
        if self.max_resolution < self.min_resolution:
            raise bad("max_resolution", "must be >= min_resolution")
        if not 0.0 < self.step <= 1.0:
            raise bad("step", "must be in (0, 1] grid cells (larger steps would skip surfaces)")
        if self.chunk_rays < 1:
            raise bad("chunk_rays", "must be >= 1")
        if self.memory_cache_mb < 0 or self.disk_cache_mb < 0:
            raise bad("memory_cache_mb" if self.memory_cache_mb < 0 else "disk_cache_mb", "must be >= 0")


def auto_resolution(options: RenderOptions, cube_pixels: float) -> int:
    """The grid size for an object whose cube spans ``cube_pixels`` pixels on screen.

    The ladder entry whose cells across the cube are nearest (in ratio) to ``cells_per_pixel``
    times ``cube_pixels``, kept within [min_resolution, max_resolution]; a fixed
    ``grid_resolution`` wins over all of it. Nearest, not "at least": a cube a pixel wider
    than a rung would otherwise cost a bake twice the size.
    """
    if options.grid_resolution is not None:
        return options.grid_resolution
    want = options.cells_per_pixel * cube_pixels
    if not math.isfinite(want):
        return options.max_resolution
    best = min(RESOLUTION_LADDER, key=lambda r: abs(math.log((r - 1) / max(want, 1e-9))))
    return max(options.min_resolution, min(best, options.max_resolution))
