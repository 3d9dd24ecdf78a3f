"""Baked grids kept for reuse: in memory (LRU, bounded in bytes) and on disk.

A grid is keyed by the model, the exact bytes of the shape and appearance codes (float32)
and the resolution. In memory the model is its ``identity`` string when it has one, else the
object itself (held by a weak reference, so a new model at a reused address never hits).
On disk only models with an ``identity`` are cached (the file name hashes it with the key);
a grid goes to disk on its key's second request, so codes drawn fresh for every image never
fill the disk. Files are ``.npz`` read with ``allow_pickle=False``, written to a temporary
name and renamed; the folder is kept under its bound by removing the oldest files.
"""

from __future__ import annotations

import hashlib
import logging
import os
import tempfile
import weakref
import zipfile
from collections import OrderedDict
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from genfield.field.grid import FieldGrid
from genfield.paths import cache_dir
from genfield.render.grids import RenderGrid, prepare

log = logging.getLogger(__name__)

FORMAT = b"genfield-render-grid-1"  # part of every key: a new layout never reads an old file
MAX_SEEN = 100_000  # keys remembered for the second-request rule


def code_key(shape: np.ndarray, appearance: np.ndarray, resolution: int) -> str:
    """Hex digest of the codes' float32 bytes and the resolution."""
    h = hashlib.sha256(FORMAT)
    for part in (shape, appearance):
        arr = np.ascontiguousarray(np.asarray(part, dtype=np.float32).reshape(-1))
        h.update(len(arr).to_bytes(4, "little"))
        h.update(arr.tobytes())
    h.update(int(resolution).to_bytes(4, "little"))
    return h.hexdigest()


def model_identity(model: Any) -> str | None:
    """The model's ``identity`` string, or None when it has none."""
    ident = getattr(model, "identity", None)
    return ident if isinstance(ident, str) and ident else None


@dataclass
class _Entry:
    grid: RenderGrid
    owner: weakref.ref | None  # the model, for models without identity


@dataclass
class CacheStats:
    memory_hits: int = 0
    disk_hits: int = 0
    bakes: int = 0
    disk_writes: int = 0


class GridCache:
    """Prepared grids by (model, codes, resolution); see the module doc."""

    def __init__(self, memory_bytes: int, *, disk: bool = True, disk_bytes: int = 2 << 30,
                 folder: Path | None = None) -> None:
        self.memory_bytes = int(memory_bytes)
        self.disk = disk
        self.disk_bytes = int(disk_bytes)
        self._folder = folder
        self._entries: OrderedDict[tuple[str, str], _Entry] = OrderedDict()
        self._seen: OrderedDict[tuple[str, str], None] = OrderedDict()
        self._held = 0
        self.stats = CacheStats()

    @property
    def folder(self) -> Path:
        return self._folder if self._folder is not None else cache_dir("grids")

    def clear(self) -> None:
        """Forget every grid held in memory (the disk is left as it is)."""
        self._entries.clear()
        self._seen.clear()
        self._held = 0

    def get(self, model: Any, shape: np.ndarray, appearance: np.ndarray, resolution: int) -> RenderGrid:
        """The prepared grid of a code pair: from memory, else disk, else ``model.bake``."""
        return self.get_many(model, [(shape, appearance, resolution)])[0]

    def get_many(self, model: Any, requests: list[tuple[np.ndarray, np.ndarray, int]]) -> list[RenderGrid]:
        """``get`` for several (shape, appearance, resolution) of one model; the model's
        identity (a hash of its weights, not free) is read once."""
        ident = model_identity(model)
        return [self._get(model, ident, *r) for r in requests]

    def _get(self, model: Any, ident: str | None, shape: np.ndarray, appearance: np.ndarray,
             resolution: int) -> RenderGrid:
        key = (ident if ident is not None else f"object-{id(model)}", code_key(shape, appearance, resolution))
        entry = self._entries.get(key)
        if entry is not None and (entry.owner is None or entry.owner() is model):
            self._entries.move_to_end(key)
            self.stats.memory_hits += 1
            if ident is not None and self._second_request(key):
                self._write(ident, key[1], entry.grid)
            return entry.grid
        grid = self._read(ident, key[1]) if ident is not None and self.disk else None
        if grid is None:
            grid = prepare(self._bake(model, shape, appearance, resolution))
            self.stats.bakes += 1
        else:
            self.stats.disk_hits += 1
        self._second_request(key)
        owner = None if ident is not None else _weak(model)
        if ident is not None or owner is not None:  # else it could never be matched safely
            self._remember(key, _Entry(grid, owner))
        return grid

    def _bake(self, model: Any, shape: np.ndarray, appearance: np.ndarray, resolution: int) -> FieldGrid:
        grid = model.bake(np.asarray(shape, np.float32), np.asarray(appearance, np.float32), resolution)
        if not isinstance(grid, FieldGrid):
            raise TypeError(f"model.bake must return a FieldGrid, got {type(grid).__name__}")
        if grid.resolution != resolution:
            raise ValueError(f"model.bake was asked for {resolution}^3 and returned {grid.resolution}^3")
        return grid

    def _second_request(self, key: tuple[str, str]) -> bool:
        """Record a request; True exactly on the key's second one."""
        if key in self._seen:
            if self._seen[key] is None:
                self._seen[key] = True  # type: ignore[assignment]
                return True
            return False
        self._seen[key] = None
        if len(self._seen) > MAX_SEEN:
            self._seen.popitem(last=False)
        return False

    def _remember(self, key: tuple[str, str], entry: _Entry) -> None:
        old = self._entries.pop(key, None)
        if old is not None:
            self._held -= old.grid.nbytes
        self._entries[key] = entry
        self._held += entry.grid.nbytes
        while self._held > self.memory_bytes and self._entries:
            _, dropped = self._entries.popitem(last=False)
            self._held -= dropped.grid.nbytes

    # --- disk ------------------------------------------------------------------------------
    def _path(self, ident: str, digest: str) -> Path:
        name = hashlib.sha256(ident.encode("utf-8") + b"\0" + digest.encode("ascii")).hexdigest()
        return self.folder / f"{name}.npz"

    def _read(self, ident: str, digest: str) -> RenderGrid | None:
        path = self._path(ident, digest)
        if not path.is_file():
            return None
        try:
            with np.load(path, allow_pickle=False) as data:
                grid = FieldGrid(density=np.array(data["density"], np.float32),
                                 albedo=np.array(data["albedo"], np.float32))
            return prepare(grid)
        except (OSError, KeyError, ValueError, zipfile.BadZipFile) as err:
            log.warning("ignoring unreadable cached grid %s (%s); baking it again", path.name, err)
            path.unlink(missing_ok=True)
            return None

    def _write(self, ident: str, digest: str, grid: RenderGrid) -> None:
        if not self.disk:
            return
        path = self._path(ident, digest)
        if path.exists():
            return
        density = grid.density[0, 0].numpy().transpose(2, 1, 0)  # torch (z, y, x) -> (x, y, z)
        albedo = grid.features[0, :3].numpy().transpose(3, 2, 1, 0)  # (3, z, y, x) -> (x, y, z, 3)
        folder = self.folder
        fd, tmp = tempfile.mkstemp(prefix=".grid-", suffix=".npz", dir=folder)
        try:
            with os.fdopen(fd, "wb") as f:
                np.savez(f, density=density, albedo=albedo)
            os.replace(tmp, path)
        except OSError as err:
            Path(tmp).unlink(missing_ok=True)
            log.warning("could not write the grid cache in %s (%s)", folder, err)
            return
        self.stats.disk_writes += 1
        self._prune(folder)

    def _prune(self, folder: Path) -> None:
        files = []
        for p in folder.glob("*.npz"):
            try:
                st = p.stat()
            except OSError:
                continue
            files.append((st.st_mtime, st.st_size, p))
        total = sum(size for _, size, _ in files)
        for _, size, p in sorted(files):
            if total <= self.disk_bytes:
                break
            p.unlink(missing_ok=True)
            total -= size


def _weak(model: Any) -> weakref.ref | None:
    try:
        return weakref.ref(model)
    except TypeError:  # an object that takes no weak references is not cached in memory
        return None


_DEFAULT: GridCache | None = None


def default_cache(memory_mb: float, disk: bool, disk_mb: float) -> GridCache:
    """The process-wide cache that ``render_scene`` uses, with the given bounds."""
    global _DEFAULT
    if _DEFAULT is None:
        _DEFAULT = GridCache(int(memory_mb * 2**20), disk=disk, disk_bytes=int(disk_mb * 2**20))
    _DEFAULT.memory_bytes = int(memory_mb * 2**20)
    _DEFAULT.disk = disk
    _DEFAULT.disk_bytes = int(disk_mb * 2**20)
    return _DEFAULT
