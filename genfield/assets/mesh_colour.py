"""Colour of an imported mesh: per-vertex and per-face factors times an optional UV texture.

Every part of a file becomes the same three arrays, so a merged mesh has one colour formula:
``linear = face_factor[f] * sum_k b_k vertex_factor[v_k] * texture(sum_k b_k uv[v_k])`` for
a point with barycentric coordinates b in face f (textures bilinear, repeating, filtered in
linear light). Where the numbers come from:

- UV texture (trimesh ``TextureVisuals``): the image is sRGB (glTF 2.0 spec, section 3.9.2,
  baseColorTexture); glTF's baseColorFactor (linear by the spec) multiplies it; an OBJ's Kd
  is replaced by its map_Kd, as OBJ readers commonly do.
- vertex / face colours (``ColorVisuals``): sRGB, the common practice of PLY and OBJ writers;
  glTF COLOR_0 is linear by the spec and is read so.
- a material without texture: its colour factor (linear).
- nothing at all: DEFAULT_SRGB grey.

Textures stay 8-bit; a 256-entry table linearises each tap, so memory is that of the files.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from genfield.colour import linear_to_srgb, srgb_to_linear

DEFAULT_SRGB = 0.7  # grey of a mesh without any colour
_LUT = srgb_to_linear(np.arange(256) / 255.0).astype(np.float32)  # 8-bit sRGB -> linear


@dataclass(frozen=True)
class PartColour:
    """One part's colour arrays (V vertices, F faces), before merging."""

    vertex_factor: np.ndarray  # (V, 3) float32 linear
    face_factor: np.ndarray  # (F, 3) float32 linear
    uv: np.ndarray | None  # (V, 2) float32, v up (trimesh's convention), or None
    texture: np.ndarray | None  # (H, W, 3) uint8 sRGB, or None
    kind: str  # "texture", "vertex", "face", "material" or "none"


def _rgb8(c) -> np.ndarray:
    return np.asarray(c, dtype=np.float64)[..., :3] / 255.0


def part_colour(mesh, linear_vertex_colours: bool) -> PartColour:
    """Read one trimesh part's visual into PartColour."""
    from trimesh.visual import ColorVisuals, TextureVisuals

    v, f = len(mesh.vertices), len(mesh.faces)
    ones_v, ones_f = np.ones((v, 3), np.float32), np.ones((f, 3), np.float32)
    visual = mesh.visual
    if isinstance(visual, TextureVisuals):
        mat = visual.material
        image = getattr(mat, "baseColorTexture", None)
        if image is None:
            image = getattr(mat, "image", None)
        factor = getattr(mat, "baseColorFactor", None)  # glTF: linear, stored as uint8 RGBA
        if factor is None and image is None:
            factor = getattr(mat, "diffuse", None)  # OBJ Kd without a map
        lin = np.ones(3) if factor is None else _rgb8(factor)
        if image is not None and visual.uv is not None and len(visual.uv) == v:
            tex = np.asarray(image.convert("RGB"), dtype=np.uint8)
            return PartColour(ones_v * lin.astype(np.float32), ones_f,
                              np.asarray(visual.uv, np.float32), tex, "texture")
        return PartColour(ones_v * lin.astype(np.float32), ones_f, None, None, "material")
    if isinstance(visual, ColorVisuals) and visual.kind in ("vertex", "face"):
        to_lin = (lambda c: c) if linear_vertex_colours else srgb_to_linear
        if visual.kind == "vertex":
            vc = to_lin(_rgb8(visual.vertex_colors)).astype(np.float32)
            return PartColour(vc, ones_f, None, None, "vertex")
        fc = to_lin(_rgb8(visual.face_colors)).astype(np.float32)
        return PartColour(ones_v, fc, None, None, "face")
    grey = float(srgb_to_linear(np.array(DEFAULT_SRGB)))
    return PartColour(ones_v * grey, ones_f, None, None, "none")


def _bilinear(tex: np.ndarray, uv: np.ndarray) -> np.ndarray:
    """Linear RGB (N, 3) of an sRGB uint8 texture (H, W, 3) at uv (N, 2), repeating."""
    h, w = tex.shape[:2]
    x = np.mod(uv[:, 0], 1.0) * w - 0.5  # texel centres at +0.5
    y = (1.0 - np.mod(uv[:, 1], 1.0)) * h - 0.5  # v up, image rows down
    x0, y0 = np.floor(x), np.floor(y)
    fx, fy = (x - x0)[:, None], (y - y0)[:, None]
    x0, y0 = x0.astype(np.int64), y0.astype(np.int64)
    x1, y1 = np.mod(x0 + 1, w), np.mod(y0 + 1, h)
    x0, y0 = np.mod(x0, w), np.mod(y0, h)

    def tap(yy, xx):
        return _LUT[tex[yy, xx]]  # (N, 3)

    top = tap(y0, x0) * (1 - fx) + tap(y0, x1) * fx
    bottom = tap(y1, x0) * (1 - fx) + tap(y1, x1) * fx
    return top * (1 - fy) + bottom * fy


@dataclass(frozen=True, eq=False)
class MeshColour:
    """Merged colour arrays of all parts of one file."""

    vertex_factor: np.ndarray  # (V, 3) float32 linear
    face_factor: np.ndarray  # (F, 3) float32 linear
    uv: np.ndarray  # (V, 2) float32 (zeros for untextured parts)
    face_texture: np.ndarray  # (F,) int32: index into textures, -1 for none
    textures: tuple[np.ndarray, ...]  # (H, W, 3) uint8 sRGB each
    kinds: tuple[str, ...]  # each part's kind, for the report

    @classmethod
    def merge(cls, parts: list[PartColour], face_keep: np.ndarray) -> MeshColour:
        """Concatenate parts in order; ``face_keep`` (sum F,) drops degenerate faces."""
        textures, face_tex = [], []
        for p in parts:
            face_tex.append(np.full(len(p.face_factor), len(textures) if p.texture is not None else -1,
                                    np.int32))
            if p.texture is not None:
                textures.append(p.texture)
        uv = [p.uv if p.uv is not None else np.zeros((len(p.vertex_factor), 2), np.float32)
              for p in parts]
        return cls(
            vertex_factor=np.concatenate([p.vertex_factor for p in parts]),
            face_factor=np.concatenate([p.face_factor for p in parts])[face_keep],
            uv=np.concatenate(uv),
            face_texture=np.concatenate(face_tex)[face_keep],
            textures=tuple(textures),
            kinds=tuple(p.kind for p in parts),
        )

    def linear(self, faces: np.ndarray, corners: np.ndarray, bary: np.ndarray) -> np.ndarray:
        """Linear RGB (N, 3) at barycentric ``bary`` (N, 3) of ``faces`` (N,) whose vertex
        indices are ``corners`` (N, 3)."""
        out = np.einsum("nk,nkc->nc", bary, self.vertex_factor[corners]) * self.face_factor[faces]
        tex_id = self.face_texture[faces]
        for t, tex in enumerate(self.textures):
            sel = np.flatnonzero(tex_id == t)
            if len(sel):
                uv = np.einsum("nk,nkc->nc", bary[sel], self.uv[corners[sel]])
                out[sel] *= _bilinear(tex, uv)
        return out

    def srgb(self, faces, corners, bary) -> np.ndarray:
        return linear_to_srgb(self.linear(faces, corners, bary)).astype(np.float32)
