"""Writing meshes and whole scenes through trimesh: GLB, PLY and OBJ.

Colour encoding follows each format's convention:
- PLY and OBJ carry display colours: vertex colours are 8-bit sRGB (IEC 61966-2-1), as
  every viewer of those formats shows them.
- glTF 2.0 defines ``COLOR_0`` as a *linear* multiplier of the base colour (glTF 2.0
  specification, section 3.7.2.1, the attribute table), so GLB vertex colours are linear
  RGB quantised to 8 bits; a glTF viewer then shows the same colour as the PLY.

Every file is written to a temporary name beside the target and renamed over it, so a
failed export never leaves half a file.
"""

from __future__ import annotations

import logging
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import trimesh

from genfield.colour import srgb_to_linear, to_srgb8
from genfield.errors import UsageError
from genfield.mesh.extract import Mesh

log = logging.getLogger(__name__)

MESH_FORMATS = (".glb", ".ply", ".obj")


@dataclass(frozen=True)
class ScenePart:
    """One node of an exported scene: a mesh in its own frame placed by ``transform``.

    transform: (4, 4) float64 object-to-world similarity (``Pose.object_to_world``).
    """

    name: str
    mesh: Mesh
    transform: np.ndarray


def encode_colours(colours: np.ndarray, suffix: str) -> np.ndarray:
    """(V, 3) linear RGB to the (V, 4) uint8 RGBA a format stores (see the module doc)."""
    if suffix == ".glb":
        rgb = np.round(np.clip(colours, 0.0, 1.0) * 255.0).astype(np.uint8)
    else:
        rgb = to_srgb8(colours)
    return np.concatenate([rgb, np.full((len(rgb), 1), 255, np.uint8)], axis=1)


def to_trimesh(mesh: Mesh, suffix: str) -> trimesh.Trimesh:
    """A trimesh of ``mesh`` with normals and colours encoded for ``suffix``'s format."""
    colours = None if mesh.colours is None else encode_colours(mesh.colours, suffix)
    return trimesh.Trimesh(vertices=mesh.vertices, faces=mesh.faces, vertex_normals=mesh.normals,
                           vertex_colors=colours, process=False)


def _check_target(path: Path, allowed: tuple[str, ...]) -> str:
    suffix = path.suffix.lower()
    if suffix not in allowed:
        raise UsageError(f"cannot write a mesh as {suffix or 'a file without extension'!r}",
                         where=str(path), hint=f"end the name in one of {', '.join(allowed)}")
    if not path.parent.is_dir():
        raise UsageError("the output folder does not exist", where=str(path.parent),
                         hint="create it first")
    return suffix


def _write_atomic(path: Path, data: bytes) -> None:
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def _export_bytes(geometry: trimesh.Trimesh | trimesh.Scene, suffix: str) -> bytes:
    if suffix == ".obj":
        text = trimesh.exchange.obj.export_obj(geometry, include_normals=True, include_color=True)
        return text.encode("utf-8")
    data = geometry.export(file_type=suffix[1:])
    return data.encode("utf-8") if isinstance(data, str) else data


def write_mesh(mesh: Mesh, path: str | Path) -> Path:
    """Write one mesh as .glb, .ply or .obj (by the file name); returns the path."""
    path = Path(path)
    suffix = _check_target(path, MESH_FORMATS)
    if len(mesh.faces) == 0:
        raise UsageError("the mesh is empty: the field has no surface here", where=str(path),
                         hint="try another code, or a finer coarse grid")
    _write_atomic(path, _export_bytes(to_trimesh(mesh, suffix), suffix))
    return path


def floor_part(parts: list[ScenePart], floor_srgb: tuple[float, float, float],
               margin: float = 0.5) -> ScenePart:
    """A square on z = 0 under the placed parts, ``margin`` metres past their footprint.

    The renderer's floor is an infinite plane; a file needs a finite one.
    """
    corners = [p.transform[:3, :3] @ c + p.transform[:3, 3]
               for p in parts for c in np.array(np.meshgrid(*[[-1.0, 1.0]] * 3)).reshape(3, -1).T]
    xy = np.array(corners)[:, :2] if corners else np.zeros((1, 2))
    lo, hi = xy.min(axis=0) - margin, xy.max(axis=0) + margin
    vertices = np.array([[lo[0], lo[1], 0], [hi[0], lo[1], 0], [hi[0], hi[1], 0], [lo[0], hi[1], 0]],
                        np.float32)
    faces = np.array([[0, 1, 2], [0, 2, 3]], np.int64)  # counter-clockwise from above: normal +z
    normals = np.tile(np.array([0, 0, 1], np.float32), (4, 1))
    colours = np.tile(srgb_to_linear(np.array(floor_srgb)).astype(np.float32), (4, 1))
    return ScenePart("floor", Mesh(vertices, faces, normals, colours), np.eye(4))


def write_scene(parts: list[ScenePart], path: str | Path) -> Path:
    """Write placed parts as one glTF binary, one named node each; returns the path."""
    path = Path(path)
    suffix = _check_target(path, (".glb",))
    names = [p.name for p in parts]
    if len(set(names)) != len(names):
        raise ValueError(f"scene part names must be unique, got {names}")
    scene = trimesh.Scene()
    for part in parts:
        if len(part.mesh.faces) == 0:
            log.warning("%s: no surface, left out of %s", part.name, path)
            continue
        scene.add_geometry(to_trimesh(part.mesh, suffix), node_name=part.name, geom_name=part.name,
                           transform=np.asarray(part.transform, dtype=np.float64))
    if not scene.geometry:
        raise UsageError("every object's mesh is empty: nothing to write", where=str(path))
    _write_atomic(path, _export_bytes(scene, suffix))
    return path
