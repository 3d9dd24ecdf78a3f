"""A trained model: network, code table, prior and metrics; queries and bakes for any code pair.

``load_model(path)`` reads a model file; ``Model.query`` is the per-sample network (numpy in
and out, chunked); ``Model.bake`` turns a code pair into a FieldGrid for the renderer and the
mesh extractor (coarse-to-fine, see ``genfield.field.bake``).
"""

from __future__ import annotations

import logging
import os
import threading
from collections import OrderedDict
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import torch

from genfield.compute import heavy_work
from genfield.errors import ModelFileError
from genfield.field.bake import (
    DEFAULT_MARGIN,
    DEFAULT_STEPS,
    BakeStats,
    GeometryBake,
    bake_colour,
    bake_geometry,
    clean_occupancy,
)
from genfield.field.codebook import CodeBook, codebook_from_contents, codebook_tensors
from genfield.field.config import ConfigError, TrainConfig, config_from_dict
from genfield.field.grid import SIGMA_MAX, FieldGrid
from genfield.field.modelfile import read_model_file, write_model_file
from genfield.field.network import FieldNetwork

log = logging.getLogger(__name__)

CHUNK = 16384  # points per network call: bounded memory, large enough for fast matrix products
# bound of the memo of shapes' geometry bakes (a 65^3 one holds about 6 MB): a shape baked
# again with another appearance costs only the colour head. A shape enters on its second bake,
# so shapes drawn afresh (never baked twice) leave it empty
GEOMETRY_MEMO_BYTES = 64 << 20
MEMO_SEEN = 4096  # keys of shapes baked once, remembered for their second bake


@dataclass(frozen=True)
class _Shaped:
    """One shape's bake, ready for any appearance: geometry and the final density."""

    bake: GeometryBake
    density: np.ndarray  # (R, R, R) float32, read-only (shared by every grid of the shape)

    @property
    def nbytes(self) -> int:
        return self.bake.nbytes + int(self.density.nbytes)


def _inside_cube(points: np.ndarray) -> np.ndarray:
    return np.all(np.abs(points) <= 1.0, axis=1)


@dataclass
class Model:
    """A field network with its codes.

    config: the TrainConfig it was trained with; codebook: names, families, codes, prior;
    sources: one entry per code (where the asset came from); metrics: measured figures.
    """

    config: TrainConfig
    network: FieldNetwork
    codebook: CodeBook
    sources: tuple[str, ...]
    metrics: dict[str, Any] = field(default_factory=dict)
    prior_info: dict[str, Any] = field(default_factory=dict)
    _memo: OrderedDict = field(default_factory=OrderedDict, init=False, repr=False, compare=False)
    _seen: OrderedDict = field(default_factory=OrderedDict, init=False, repr=False, compare=False)
    _memo_lock: threading.Lock = field(default_factory=threading.Lock, init=False, repr=False,
                                       compare=False)

    def __post_init__(self) -> None:
        self.network.eval()
        for p in self.network.parameters():
            p.requires_grad_(False)

    # --- codes -----------------------------------------------------------------------------
    def codes(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """The (shape (Ds,), appearance (Da,)) codes stored under ``name``."""
        i = self.codebook.index(name)
        return self.codebook.shape[i], self.codebook.appearance[i]

    def _code(self, code: np.ndarray, dim: int, what: str) -> torch.Tensor:
        c = np.asarray(code, dtype=np.float32).reshape(-1)
        if c.shape != (dim,):
            raise ValueError(f"{what} code must have {dim} entries, got {c.shape[0]}")
        return torch.from_numpy(c)[None, :]  # (1, dim)

    # --- per-sample queries ----------------------------------------------------------------
    def _geometry(self, points: np.ndarray, shape: torch.Tensor) -> tuple[np.ndarray, np.ndarray]:
        """Logits (N,) and features (N, feature_width) at object-frame points (N, 3), chunked."""
        pts = np.ascontiguousarray(points, dtype=np.float32).reshape(-1, 3)
        logits = np.empty(len(pts), np.float32)
        feats = np.empty((len(pts), self.network.feature_width), np.float32)
        with torch.inference_mode(), heavy_work():
            for s in range(0, len(pts), CHUNK):
                x = torch.from_numpy(pts[s : s + CHUNK])[None]  # (1, n, 3)
                lg, ft = self.network.geometry(x, shape)
                logits[s : s + CHUNK] = lg[0].numpy()
                feats[s : s + CHUNK] = ft[0].numpy()
        return logits, feats

    def _colour(self, feats: np.ndarray, appearance: torch.Tensor) -> np.ndarray:
        out = np.empty((len(feats), 3), np.float32)
        with torch.inference_mode(), heavy_work():
            for s in range(0, len(feats), CHUNK):
                f = torch.from_numpy(feats[s : s + CHUNK])[None]  # (1, n, F)
                out[s : s + CHUNK] = self.network.albedo(f, appearance)[0].numpy()
        return out

    def query_logits(self, points: np.ndarray, shape: np.ndarray) -> np.ndarray:
        """Occupancy logits (N,) at points (N, 3); -inf outside the object cube."""
        pts = np.asarray(points, dtype=np.float32).reshape(-1, 3)
        logits, _ = self._geometry(pts, self._code(shape, self.codebook.shape_dim, "shape"))
        logits[~_inside_cube(pts)] = -np.inf
        return logits

    def query_occupancy(self, points: np.ndarray, shape: np.ndarray) -> np.ndarray:
        """Occupancy in [0, 1] (N,) float32 at object-frame points (N, 3); 0 outside the cube."""
        logits = self.query_logits(points, shape)
        return (1.0 / (1.0 + np.exp(-np.clip(logits, -60.0, 60.0)))).astype(np.float32)

    def query(self, points: np.ndarray, shape: np.ndarray,
              appearance: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Occupancy (N,) and linear albedo (N, 3), float32, at object-frame points (N, 3).

        The per-sample network: every point through the trunk and the colour head.
        """
        pts = np.asarray(points, dtype=np.float32).reshape(-1, 3)
        logits, feats = self._geometry(pts, self._code(shape, self.codebook.shape_dim, "shape"))
        albedo = self._colour(feats, self._code(appearance, self.codebook.appearance_dim,
                                                "appearance"))
        inside = _inside_cube(pts)
        occupancy = np.where(inside, 1.0 / (1.0 + np.exp(-np.clip(logits, -60.0, 60.0))), 0.0)
        return occupancy.astype(np.float32), albedo

    # --- grids -----------------------------------------------------------------------------
    def bake_with_stats(self, shape: np.ndarray, appearance: np.ndarray, resolution: int = 64, *,
                        clean: bool = True, steps: tuple[int, ...] = DEFAULT_STEPS,
                        margin: float = DEFAULT_MARGIN) -> tuple[FieldGrid, BakeStats]:
        """``bake`` and how many points the network evaluated at each level (for the shape:
        the same figures when its geometry came from the memo)."""
        if resolution < 2:
            raise ValueError(f"resolution must be >= 2, got {resolution}")
        s = self._code(shape, self.codebook.shape_dim, "shape")
        a = self._code(appearance, self.codebook.appearance_dim, "appearance")
        with torch.inference_mode(), heavy_work():
            axis = torch.from_numpy(np.linspace(-1.0, 1.0, resolution).astype(np.float32))  # grid_points' axis
            shaped = self._shaped(s, axis, clean, steps, margin)
            tables = self.network.colour_tables(axis, a)

            def colour(ijk: np.ndarray, features: np.ndarray) -> np.ndarray:
                albedo = np.empty((len(ijk), 3), np.float32)
                for c in range(0, len(ijk), CHUNK):
                    albedo[c : c + CHUNK] = self.network.grid_albedo(
                        tables, torch.from_numpy(ijk[c : c + CHUNK]),
                        torch.from_numpy(features[c : c + CHUNK]), a).numpy()
                return albedo

            albedo = bake_colour(shaped.bake, colour)
        return FieldGrid(density=shaped.density, albedo=np.clip(albedo, 0.0, 1.0)), shaped.bake.stats

    def forget_shapes(self) -> None:
        """Empty the memo of shapes' geometry bakes (the next bake of any shape is a full one)."""
        with self._memo_lock:
            self._memo.clear()
            self._seen.clear()

    def _shaped(self, s: torch.Tensor, axis: torch.Tensor, clean: bool, steps: tuple[int, ...],
                margin: float) -> _Shaped:
        """The geometry bake of shape code s (1, Ds), from the memo when it is there. The key
        holds the weights' version counters, so a changed network is never served old grids."""
        key = (s.numpy().tobytes(), len(axis), clean, tuple(steps), float(margin),
               tuple((id(p), p._version) for p in self.network.parameters()))
        with self._memo_lock:
            hit = self._memo.get(key)
            if hit is not None:
                self._memo.move_to_end(key)
                return hit
            second = self._seen.pop(hash(key), False)
            if not second:
                self._seen[hash(key)] = True  # only a hash: the memo itself holds whole keys
                if len(self._seen) > MEMO_SEEN:
                    self._seen.popitem(last=False)
        tables = self.network.trunk_tables(axis, s)

        def geometry(ijk: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            logits = np.empty(len(ijk), np.float32)
            features = np.empty((len(ijk), self.config.network.feature_dim), np.float32)
            for c in range(0, len(ijk), CHUNK):
                lg, ft = self.network.grid_geometry(tables, torch.from_numpy(ijk[c : c + CHUNK]))
                logits[c : c + CHUNK], features[c : c + CHUNK] = lg.numpy(), ft.numpy()
            return logits, features

        bake = bake_geometry(geometry, len(axis), steps=steps, margin=margin)
        occupancy = 1.0 / (1.0 + np.exp(-np.clip(bake.logits, -60.0, 60.0)))
        if clean:
            occupancy, _ = clean_occupancy(occupancy, self.config.prior.clean_fraction)
        density = (SIGMA_MAX * occupancy).astype(np.float32)
        density.flags.writeable = False
        shaped = _Shaped(bake, density)
        if not second:
            return shaped
        with self._memo_lock:
            self._memo[key] = shaped
            held = sum(v.nbytes for v in self._memo.values())
            while held > GEOMETRY_MEMO_BYTES and len(self._memo) > 1:
                held -= self._memo.popitem(last=False)[1].nbytes
        return shaped

    def bake(self, shape: np.ndarray, appearance: np.ndarray, resolution: int = 64, *,
             clean: bool = True) -> FieldGrid:
        """The field of one code pair on a resolution^3 grid over [-1, 1]^3 (grid.py layout).

        density = SIGMA_MAX * occupancy, albedo linear RGB. ``clean`` removes floating parts
        below ``config.prior.clean_fraction`` of the volume.
        """
        return self.bake_with_stats(shape, appearance, resolution, clean=clean)[0]

    # --- file ------------------------------------------------------------------------------
    def tensors(self) -> dict[str, np.ndarray]:
        out = {f"net.{k}": v.detach().numpy().copy() for k, v in self.network.state_dict().items()}
        out.update(codebook_tensors(self.codebook))
        return out

    def save(self, path: str | os.PathLike) -> None:
        """Write the model file (atomically)."""
        write_model_file(path, self.tensors(), {
            "config": self.config.to_dict(),
            "names": list(self.codebook.names),
            "families": list(self.codebook.families),
            "sources": list(self.sources),
            "prior": self.prior_info,
            "metrics": self.metrics,
        })

    @property
    def identity(self) -> str:
        """SHA-256 of the network's config and weights and of the bake's refinement settings:
        what a bake depends on besides the codes (the renderer keys its disk cache of baked
        grids by it). Recomputed on every call (about a millisecond), so it follows any
        change of the weights."""
        import hashlib
        import json

        h = hashlib.sha256(json.dumps(self.config.to_dict()["network"], sort_keys=True).encode())
        h.update(json.dumps(self.config.prior.clean_fraction).encode())
        h.update(json.dumps([DEFAULT_STEPS, DEFAULT_MARGIN]).encode())  # how a bake refines
        for name, value in sorted(self.network.state_dict().items()):
            h.update(name.encode())
            h.update(value.detach().numpy().tobytes())
        return h.hexdigest()

    @property
    def parameter_count(self) -> int:
        return sum(p.numel() for p in self.network.parameters())


def network_from_tensors(cfg: TrainConfig, tensors: dict[str, np.ndarray], where: str) -> FieldNetwork:
    """A FieldNetwork with the ``net.*`` arrays loaded; a mismatch is a ModelFileError."""
    net = FieldNetwork(cfg.network)
    state = {k[4:]: torch.from_numpy(np.array(v)) for k, v in tensors.items() if k.startswith("net.")}
    expected = net.state_dict()
    if set(state) != set(expected) or any(state[k].shape != expected[k].shape for k in state):
        raise ModelFileError("the network weights do not match the stored config", where=where)
    net.load_state_dict(state)
    return net


def load_model(path: str | os.PathLike) -> Model:
    """Read a model file written by ``genfield train`` or ``genfield fit``."""
    where = str(path)
    contents = read_model_file(path)
    meta = contents.meta
    stored = meta["config"]
    if isinstance(stored, dict) and isinstance(stored.get("network"), dict):
        # written before the colour head had waves or own waves: its network has none
        stored = {**stored, "network": {"colour_waves": 0, "colour_harmonics": 0,
                                        **stored["network"]}}
    try:
        cfg = config_from_dict(stored, where=f"{where} (stored config)")
    except ConfigError as err:
        raise ModelFileError(f"stored config is not valid: {err.message}", where=where) from None
    book = codebook_from_contents(contents.tensors, meta["names"], meta["families"], where)
    sources = tuple(str(s) for s in meta["sources"])
    if len(sources) != len(book.names):
        raise ModelFileError("the sources list does not match the code table", where=where)
    net = network_from_tensors(cfg, contents.tensors, where)
    log.debug("loaded %s: %d codes", Path(path).name, len(book.names))
    return Model(config=cfg, network=net, codebook=book, sources=sources,
                 metrics=meta["metrics"], prior_info=meta["prior"])
