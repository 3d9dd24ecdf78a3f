"""Imported meshes as training sources: OBJ, PLY, STL, glTF/GLB through trimesh.

A source is a file, a folder (its supported files, sorted) or a glob. Each file becomes one
asset: all its triangle parts merged (scene transforms applied), turned upright, centred on
its bounding box and scaled so the largest half-extent is FIT object units. The asset records
``metric_half_extent`` (file units times ``metres_per_unit``, over FIT) and ``offset``, the
box centre in the file's own axes and metres, so that
``x_file = offset + R_up^T (metric_half_extent * x_object)``.

Up axis: glTF is y-up by its spec and is turned so that +y becomes +z; OBJ, PLY and STL are
taken as z-up unless ``up="y"`` is given. Inside/outside: a majority vote of rays
(``mesh_inside``), reported per asset in ``parameters["inside_test"]``. Colour: ``mesh_colour``.

Bad input raises SourceError naming the file: not a mesh, no triangles, only degenerate
triangles, an unreadable material or texture, more than MAX_FACES triangles.
"""

from __future__ import annotations

import glob as globbing
import hashlib
import json
import logging
import re
import struct
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from genfield.assets.asset import FIT, Asset
from genfield.assets.mesh_colour import MeshColour, part_colour
from genfield.assets.mesh_inside import RAYS, inside, ray_votes
from genfield.errors import SourceError

log = logging.getLogger(__name__)

SUFFIXES = (".obj", ".ply", ".stl", ".glb", ".gltf")
MAX_FACES = 10_000_000  # ~1.5 GB of trimesh arrays plus Embree's tree: refuse above this
NEAREST_SAMPLES = 1 << 18  # surface samples behind colour_srgb at points off the surface
_UP_Y = np.array([[1.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]])  # +y -> +z (x about 90 deg)


@dataclass(frozen=True, eq=False)
class MeshGeometry:
    """A normalised mesh (object units), its colour, and the ray-vote inside test."""

    mesh: object  # trimesh.Trimesh
    colour: MeshColour
    signed: bool  # rays count signed crossings (consistent orientation) or parity
    _nearest: dict = field(default_factory=dict, repr=False)  # lazily built colour lookup

    def occupancy(self, points):
        return inside(self.mesh, points, self.signed).astype(np.float32)

    def face_colour_srgb(self, faces: np.ndarray, points: np.ndarray) -> np.ndarray:
        """sRGB (N, 3) at points (N, 3) lying on faces (N,)."""
        from trimesh.triangles import points_to_barycentric

        bary = points_to_barycentric(self.mesh.triangles[faces], points)
        bary = np.clip(bary, 0.0, 1.0)
        bary /= np.maximum(bary.sum(axis=1, keepdims=True), 1e-12)
        return self.colour.srgb(faces, self.mesh.faces[faces], bary)

    def surface(self, count, g):
        from trimesh.sample import sample_surface

        points, faces = sample_surface(self.mesh, count, seed=g)
        return points, self.face_colour_srgb(faces, points)

    def colour_srgb(self, points):
        """Colour of the nearest of NEAREST_SAMPLES surface samples (exact on the surface up to
        the samples' spacing; the ground truth and the tracer use exact face colours)."""
        if "tree" not in self._nearest:
            from scipy.spatial import cKDTree

            from genfield.seeds import rng

            p, c = self.surface(NEAREST_SAMPLES, rng(0, 0, "mesh-colour-lookup"))
            self._nearest.update(tree=cKDTree(p), colour=c)
        _, idx = self._nearest["tree"].query(np.asarray(points, dtype=np.float64))
        return self._nearest["colour"][idx]


def _files(source: str | Path) -> list[Path]:
    path = Path(source)
    if path.is_dir():
        found = sorted(p for p in path.iterdir() if p.suffix.lower() in SUFFIXES and p.is_file())
        if not found:
            raise SourceError("the folder holds no mesh files", where=str(path),
                              hint=f"supported: {', '.join(SUFFIXES)}")
        return found
    if path.is_file():
        if path.suffix.lower() not in SUFFIXES:
            raise SourceError(f"not a supported mesh format ({path.suffix or 'no suffix'})",
                              where=str(path), hint=f"supported: {', '.join(SUFFIXES)}")
        return [path]
    if globbing.has_magic(str(source)):
        found = sorted(Path(p) for p in globbing.glob(str(source), recursive=True)
                       if Path(p).suffix.lower() in SUFFIXES and Path(p).is_file())
        if not found:
            raise SourceError("the pattern matches no mesh files", where=str(source),
                              hint=f"supported: {', '.join(SUFFIXES)}")
        return found
    raise SourceError("no such file or folder", where=str(source))


def _gltf_json(path: Path) -> dict:
    """The JSON of a .gltf, or of a .glb's first chunk (glTF 2.0 spec, section 4.4 GLB)."""
    data = path.read_bytes() if path.suffix.lower() == ".gltf" else None
    if data is None:
        with open(path, "rb") as f:
            head = f.read(20)
            if len(head) < 20 or head[:4] != b"glTF":
                raise SourceError("not a GLB file (bad header)", where=str(path))
            (length,) = struct.unpack("<I", head[12:16])
            data = f.read(length)
    try:
        return json.loads(data)
    except ValueError as err:
        raise SourceError(f"not a glTF file: {err}", where=str(path)) from None


def _check_textures(path: Path) -> bool:
    """Open every base-colour texture the file names; True when it names any.

    trimesh drops an unreadable texture without a word, so we look ourselves: an OBJ's
    ``mtllib`` files and their ``map_Kd`` images, a glTF's base-colour textures (the embedded
    or referenced images are then checked after loading).
    """
    from PIL import Image

    suffix = path.suffix.lower()
    if suffix in (".glb", ".gltf"):
        doc = _gltf_json(path)
        return any("baseColorTexture" in m.get("pbrMetallicRoughness", {})
                   for m in doc.get("materials", []))
    if suffix != ".obj":
        return False
    named = False
    with open(path, encoding="utf-8", errors="replace") as f:
        libs = [line.split(None, 1)[1].strip() for line in f if line.startswith("mtllib ")]
    for lib in libs:
        mtl = path.parent / lib
        try:
            lines = mtl.read_text(encoding="utf-8", errors="replace").splitlines()
        except OSError as err:
            raise SourceError(f"unreadable material file {lib!r}: {err.strerror}", where=str(path),
                              hint="put the .mtl beside the .obj, or remove its mtllib line") from None
        for line in lines:
            if line.strip().startswith("map_Kd"):
                named = True
                image = mtl.parent / line.split()[-1]  # options (-s, -o ...) come before the name
                try:
                    with Image.open(image) as im:
                        im.load()
                except (OSError, ValueError) as err:
                    raise SourceError(f"unreadable texture {image.name!r} named in {mtl.name}: {err}",
                                      where=str(path)) from None
    return named


def _parts(path: Path):
    """The file's triangle meshes with scene transforms applied (trimesh.Trimesh list)."""
    import trimesh

    try:
        loaded = trimesh.load(path, process=False)
    except Exception as err:  # noqa: BLE001 (trimesh raises many kinds for a bad file)
        raise SourceError(f"not a mesh trimesh can read: {type(err).__name__}: {err}",
                          where=str(path)) from None
    geoms = loaded.dump(concatenate=False) if isinstance(loaded, trimesh.Scene) else [loaded]
    parts = [g for g in geoms if isinstance(g, trimesh.Trimesh) and len(g.faces)]
    if not parts:
        kinds = sorted({type(g).__name__ for g in geoms}) or ["nothing"]
        raise SourceError(f"not a mesh: the file holds no triangles (found {', '.join(kinds)})",
                          where=str(path))
    return parts


def _name(path: Path, taken: set[str]) -> str:
    stem = re.sub(r"[^A-Za-z0-9_.-]+", "_", path.stem).strip("_") or "mesh"
    if stem in taken:  # same stem in another folder: add a stable suffix from the path
        stem = f"{stem}-{hashlib.sha256(str(path.resolve()).encode()).hexdigest()[:6]}"
    taken.add(stem)
    return stem


def load_mesh(path: Path, *, metres_per_unit: float = 1.0, up: str | None = None,
              name: str | None = None) -> Asset:
    """One file as an asset (see the module docstring)."""
    import trimesh

    where = str(path)
    up = up or ("y" if path.suffix.lower() in (".glb", ".gltf") else "z")
    if up not in ("y", "z"):
        raise SourceError(f"up axis must be 'y' or 'z', got {up!r}", where=where)
    if not metres_per_unit > 0:
        raise SourceError(f"metres_per_unit must be > 0, got {metres_per_unit}", where=where)
    wants_texture = _check_textures(path)
    parts = _parts(path)
    faces_total = sum(len(p.faces) for p in parts)
    if faces_total > MAX_FACES:
        raise SourceError(f"{faces_total} triangles is more than {MAX_FACES}", where=where,
                          hint="decimate the mesh first")
    gltf = path.suffix.lower() in (".glb", ".gltf")
    colours = [part_colour(p, linear_vertex_colours=gltf) for p in parts]
    if wants_texture and not any(c.kind == "texture" for c in colours):
        raise SourceError("unreadable texture: the file names one but none could be decoded",
                          where=where)
    offsets = np.cumsum([0] + [len(p.vertices) for p in parts])
    vertices = np.concatenate([np.asarray(p.vertices, dtype=np.float64) for p in parts])
    faces = np.concatenate([np.asarray(p.faces, dtype=np.int64) + o for p, o in zip(parts, offsets[:-1], strict=True)])
    if not np.isfinite(vertices).all():
        raise SourceError("degenerate mesh: vertices that are not finite numbers", where=where)
    rot = _UP_Y if up == "y" else np.eye(3)
    vertices = vertices @ rot.T
    tri = vertices[faces]  # (F, 3, 3)
    area2 = np.linalg.norm(np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0]), axis=1)
    lo, hi = vertices[faces.ravel()].min(axis=0), vertices[faces.ravel()].max(axis=0)
    half = float(np.max(hi - lo)) / 2.0
    keep = area2 > 1e-12 * max(half, 1e-300) ** 2
    if not keep.any() or half <= 0.0:
        raise SourceError(f"degenerate mesh: all {len(faces)} triangles have zero area", where=where)
    centre = (lo + hi) / 2.0
    unit = half / FIT  # file units per object unit
    mesh = trimesh.Trimesh((vertices - centre) / unit, faces[keep], process=False)
    colour = MeshColour.merge(colours, keep)
    welded = trimesh.Trimesh(mesh.vertices, mesh.faces, process=True)  # STL has unshared corners
    oriented = bool(welded.is_winding_consistent)
    watertight = bool(welded.is_watertight and oriented)
    del welded
    digest = hashlib.sha256()
    for arr in (mesh.vertices, mesh.faces, colour.vertex_factor, colour.face_factor, colour.uv,
                *colour.textures):
        digest.update(np.ascontiguousarray(arr).tobytes())
    digest.update(json.dumps([metres_per_unit, up]).encode())
    geometry = MeshGeometry(mesh, colour, signed=oriented)
    split = _vote_split(mesh, oriented)
    test = (f"majority of {RAYS} rays, each by "
            + ("signed crossings (faces consistently oriented)" if oriented
               else "crossing parity (faces not consistently oriented)")
            + ("; mesh watertight" if watertight else "; mesh NOT watertight, holes outvoted")
            + f"; rays disagree at {100 * split:.2f}% of probe points")
    log.info("%s: %d triangles, colour from %s; inside test: %s", path.name, len(mesh.faces),
             "+".join(sorted(set(colour.kinds))), test)
    return Asset(
        name=name or _name(path, set()),
        family="mesh",
        source=str(path),
        metric_half_extent=unit * metres_per_unit,
        offset=tuple(float(c) for c in (rot.T @ centre) * metres_per_unit),  # type: ignore[arg-type]
        content_hash=digest.hexdigest(),
        parameters={"faces": int(len(mesh.faces)), "dropped_degenerate_faces": int((~keep).sum()),
                    "parts": len(parts), "colour": sorted(set(colour.kinds)), "up": up,
                    "metres_per_unit": metres_per_unit, "watertight": watertight,
                    "inside_test": test, "inside_split_share": split},
        geometry=geometry,
    )


def _vote_split(mesh, signed: bool, probes: int = 4096) -> float:
    """Share of probe points (half uniform in the box, half within 1% of the surface) where the
    rays' parities disagree: zero on a clean closed mesh."""
    from trimesh.sample import sample_surface

    from genfield.seeds import rng

    g = rng(0, 0, "mesh-vote-probe")
    near, _ = sample_surface(mesh, probes // 2, seed=g)
    pts = np.concatenate([g.uniform(-1, 1, (probes // 2, 3)), near + g.normal(0, 0.01, near.shape)])
    votes = ray_votes(mesh, pts, signed)
    return float(np.mean((votes > 0) & (votes < RAYS)))


def load_mesh_assets(path_or_glob: str | Path, *, metres_per_unit: float = 1.0,
                     up: str | None = None) -> list[Asset]:
    """Every mesh file of a file, folder or glob as an asset, in sorted path order.

    Names are the file stems (characters other than letters, digits, ``_.-`` become ``_``); a
    stem seen twice gets ``-<6 hex of the path's hash>``.
    """
    taken: set[str] = set()
    return [load_mesh(p, metres_per_unit=metres_per_unit, up=up, name=_name(p, taken))
            for p in _files(path_or_glob)]
