"""Meshes of a trained field: one code pair, or every object of a concrete scene, posed.

The extractor takes plain callables; this module binds them to a model's per-sample queries
(``Model.query_occupancy`` for the grid, ``Model.query`` for the colours at the vertices),
so the mesh is the network's own surface, not a baked grid's.
"""

from __future__ import annotations

import logging
import re
from typing import Protocol

import numpy as np

from genfield.errors import UsageError
from genfield.mesh.export import ScenePart, floor_part
from genfield.mesh.extract import ExtractionStats, Mesh, extract_mesh
from genfield.scene import Scene

log = logging.getLogger(__name__)


class FieldModel(Protocol):
    """What meshing needs of ``genfield.field.model.Model``."""

    def query_occupancy(self, points: np.ndarray, shape: np.ndarray) -> np.ndarray: ...

    def query(self, points: np.ndarray, shape: np.ndarray,
              appearance: np.ndarray) -> tuple[np.ndarray, np.ndarray]: ...


def variant_mesh(model: FieldModel, shape: np.ndarray, appearance: np.ndarray | None, *,
                 resolution: int = 128, coarse: int = 32, min_part: float = 0.0,
                 progress: bool = False) -> tuple[Mesh, ExtractionStats]:
    """The mesh of one code pair in the object frame, coloured unless ``appearance`` is None.

    shape: (Ds,) float32; appearance: (Da,) float32; min_part: drop pieces under this fraction
    of the volume (0 keeps all).
    """
    def occupancy(points: np.ndarray) -> np.ndarray:
        return model.query_occupancy(points, shape)

    def colour(points: np.ndarray) -> np.ndarray:
        return model.query(points, shape, appearance)[1]

    return extract_mesh(occupancy, None if appearance is None else colour, resolution=resolution,
                        coarse=coarse, min_component_fraction=min_part, progress=progress)


_BUILTIN = re.compile(r"builtin:(?P<family>[\w-]+):seed=(?P<seed>\d+):index=(?P<index>\d+)")


def builtin_asset(source: str):
    """The built-in ``genfield.assets.Asset`` a model's source string names, or None.

    Built-in sources read ``builtin:<family>:seed=<s>:index=<i>`` and rebuild exactly (cheap).
    """
    from genfield.assets import make_builtin

    match = _BUILTIN.fullmatch(source)
    if match is None:
        return None
    return make_builtin(match["family"], int(match["index"]), int(match["seed"]))


def training_half_extent(codebook, sources: tuple[str, ...], shape: np.ndarray) -> tuple[str, float]:
    """(name, metres) of the training asset whose shape code is nearest to ``shape`` (Ds,).

    The model file records where each code came from, not its size, so a built-in asset is
    rebuilt from its source; for a code learned from a mesh file the size is not known and a
    UsageError asks for it.
    """
    row = int(np.argmin(np.linalg.norm(codebook.shape - np.asarray(shape)[None, :], axis=1)))
    name, source = codebook.names[row], sources[row]
    asset = builtin_asset(source)
    if asset is None:
        raise UsageError(f"the model does not record the real size of {name!r} (from {source})",
                         hint="give it in metres: --real-size HALF_EXTENT")
    return name, asset.metric_half_extent


def part_name(object_id: int, label: str) -> str:
    """A scene node's name: the instance id and the class label, e.g. ``3-mug``."""
    return f"{object_id}-{label}"


def scene_parts(model: FieldModel, scene: Scene, *, resolution: int = 128, coarse: int = 32,
                min_part: float = 0.0, floor: bool = False,
                progress: bool = False) -> list[ScenePart]:
    """One part per object of ``scene`` placed by its pose (``Pose.object_to_world``), and
    the floor (z = 0, the backdrop's floor colour) under them when ``floor``."""
    parts = []
    for obj in scene.objects:
        mesh, _ = variant_mesh(model, obj.shape.array, obj.appearance.array, resolution=resolution,
                               coarse=coarse, min_part=min_part, progress=progress)
        parts.append(ScenePart(part_name(obj.id, obj.label), mesh, obj.pose.object_to_world()))
        log.info("object %s: %d faces", parts[-1].name, len(mesh.faces))
    if floor:
        parts.append(floor_part(parts, scene.backdrop.floor_srgb))
    return parts
