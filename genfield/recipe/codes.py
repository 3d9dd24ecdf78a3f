"""Code expressions to vectors, through a model's CodeBook (numpy only, no torch).

A code is resolved in one of three spaces: "shape", "appearance", or "joint" (the two
concatenated, shape first), which is how ``asset X`` keeps a prior draw's shape and
appearance together. Without a CodeBook (``genfield check --show`` with no model) the
expression is still drawn, so picks, weights and temperatures are known, but the vector is
left empty.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from genfield.errors import RecipeError
from genfield.field.codebook import CodeBook
from genfield.recipe import values as v
from genfield.recipe.names import error_at, nearest

SPACES = ("shape", "appearance", "joint")


def dimension(codebook: CodeBook, space: str) -> int:
    if space == "shape":
        return codebook.shape_dim
    if space == "appearance":
        return codebook.appearance_dim
    return codebook.shape_dim + codebook.appearance_dim


def _row(codebook: CodeBook, name: str, space: str, pos) -> np.ndarray:
    try:
        i = codebook.index(name)
    except KeyError:
        raise unknown_code(name, codebook, pos) from None
    if space == "shape":
        return codebook.shape[i].astype(np.float64)
    if space == "appearance":
        return codebook.appearance[i].astype(np.float64)
    return np.concatenate([codebook.shape[i], codebook.appearance[i]]).astype(np.float64)


def unknown_code(name: str, codebook: CodeBook, pos) -> RecipeError:
    near = nearest(name, list(codebook.names))
    hint = f"did you mean '{near}'?" if near else f"the model has {len(codebook.names)} codes, " \
        f"e.g. {', '.join(codebook.names[:4])}"
    return error_at(f"the model has no code named '{name}'", pos, hint=hint)


def slerp_many(vectors: np.ndarray, weights: np.ndarray, iterations: int = 100) -> np.ndarray:
    """Weighted spherical mean of the directions (n, D), scaled by the weighted mean norm.

    The direction is the point p on the unit sphere minimising sum_i w_i angle(p, u_i)^2,
    found with the fixed-point iteration of Buss and Fillmore, "Spherical averages and
    applications to spherical splines and interpolation" (ACM TOG 20(2), 2001), algorithm A1:
    p <- exp_p(sum_i w_i log_p(u_i)). For two codes of equal length it is Shoemake's slerp.
    Raises ValueError for a zero code or for directions that cancel out.
    """
    norms = np.linalg.norm(vectors, axis=1)  # (n,)
    if np.any(norms <= 1e-12):
        raise ValueError("slerp needs codes of non-zero length")
    units = vectors / norms[:, None]  # (n, D)
    p = weights @ units  # (D,)
    if np.linalg.norm(p) < 1e-9:
        raise ValueError("the codes point in opposite directions, so slerp has no midpoint")
    p /= np.linalg.norm(p)
    for _ in range(iterations):
        cos = np.clip(units @ p, -1.0, 1.0)  # (n,)
        theta = np.arccos(cos)
        if np.any((theta > np.pi - 1e-9) & (weights > 0)):
            raise ValueError("a code points opposite the blend, so slerp has no midpoint")
        sin = np.sin(theta)
        factor = np.where(theta > 1e-12, theta / np.where(sin > 0, sin, 1.0), 1.0)  # theta / sin
        tangent = (weights * factor) @ (units - cos[:, None] * p)  # (D,) the log maps' mean
        step = float(np.linalg.norm(tangent))
        if step < 1e-14:
            break
        p = np.cos(step) * p + np.sin(step) * tangent / step  # exp map at p
        p /= np.linalg.norm(p)
    return float(weights @ norms) * p


def resolve(node: Any, space: str, ctx: v.Context,
            codebook: CodeBook | None) -> tuple[np.ndarray | None, dict[str, Any]]:
    """(vector or None, expression as JSON-able dict) for one code node."""
    if isinstance(node, v.Pick):
        return resolve(node.options[v.choose(node, ctx.rng)], space, ctx, codebook)
    if isinstance(node, v.NamedCode):
        name = v.draw(node.name, ctx)
        vec = None if codebook is None else _row(codebook, name, space, node.pos)
        return vec, {"kind": "named", "name": name}
    if isinstance(node, v.PriorCode):
        t = float(v.draw(node.temperature, ctx))
        if t < 0:
            raise error_at(f"a temperature must be >= 0, got {t:g}", node.pos)
        expr = {"kind": "prior", "temperature": t}
        if codebook is None:
            return None, expr
        shape, appearance = codebook.sample_prior(ctx.rng, t)
        vec = {"shape": shape, "appearance": appearance}.get(space)
        if vec is None:
            vec = np.concatenate([shape, appearance])
        return vec.astype(np.float64), expr
    if isinstance(node, v.MixCode):
        return _mix(node, space, ctx, codebook)
    if isinstance(node, v.ShiftCode):
        base, expr = resolve(node.base, space, ctx, codebook)
        by = float(v.draw(node.by, ctx))
        out = {"kind": "shift", "base": expr, "dim": node.dim, "by": by}
        if base is None:
            return None, out
        if node.dim >= base.shape[0]:
            raise error_at(f"the {space} code has {base.shape[0]} dimensions (0 to "
                           f"{base.shape[0] - 1}); dim {node.dim} is past them", node.pos)
        base = base.copy()
        base[node.dim] += by
        return base, out
    if isinstance(node, v.VectorCode):
        vec = np.asarray(v.draw(node.items, ctx), dtype=np.float64)
        if codebook is not None and vec.shape[0] != dimension(codebook, space):
            raise error_at(f"the model's {space} code has {dimension(codebook, space)} numbers; "
                           f"this vector has {vec.shape[0]}", node.pos)
        return (vec if codebook is not None else None), {"kind": "vector", "values": list(vec)}
    raise TypeError(f"not a code node: {node!r}")


def _mix(node: v.MixCode, space: str, ctx: v.Context,
         codebook: CodeBook | None) -> tuple[np.ndarray | None, dict[str, Any]]:
    weights = np.array([float(v.draw(w, ctx)) for w in node.weights])  # (n,)
    if np.any(weights < 0) or weights.sum() <= 0:
        raise error_at(f"blend weights must be >= 0 with a sum above 0, got "
                       f"{', '.join(f'{w:g}' for w in weights)}", node.pos)
    weights = weights / weights.sum()
    expr = {"kind": "mix", "names": list(node.names), "weights": weights.tolist(),
            "spherical": node.spherical}
    if codebook is None:
        return None, expr
    rows = np.stack([_row(codebook, n, space, p) for n, p in
                     zip(node.names, node.name_pos or (node.pos,) * len(node.names), strict=True)])  # (n, D)
    if not node.spherical:
        return weights @ rows, expr
    try:
        return slerp_many(rows, weights), expr
    except ValueError as err:
        raise error_at(str(err), node.pos, hint="use lerp for these codes") from None


def check_codes(recipe, codebook: CodeBook) -> None:
    """Every code name, dimension and vector length of a recipe against a model's table.

    Raises RecipeError at the first problem, with "did you mean" for names.
    """
    nodes = {c.name: c.value for c in recipe.constants}
    for obj in recipe.objects:
        for space, node in (("joint", obj.joint), ("shape", obj.shape),
                            ("appearance", obj.appearance)):
            if node is not None:
                _check(node, space, codebook, nodes)


def _names(node: Any, nodes: dict[str, Any]) -> list[str]:
    if isinstance(node, v.Fixed):
        return [node.value]
    if isinstance(node, v.Pick):
        return [n for o in node.options for n in _names(o, nodes)]
    if isinstance(node, v.ConstantRef):
        return _names(nodes[node.name], nodes)
    if isinstance(node, (v.Param, v.ParamVec)):
        return _names(node.inner, nodes)
    return []


def _check(node: Any, space: str, codebook: CodeBook, nodes: dict[str, Any]) -> None:
    if isinstance(node, v.Pick):
        for option in node.options:
            _check(option, space, codebook, nodes)
    elif isinstance(node, v.NamedCode):
        for name in _names(node.name, nodes):
            if name not in codebook.names:
                raise unknown_code(name, codebook, node.pos)
    elif isinstance(node, v.MixCode):
        for name, pos in zip(node.names, node.name_pos or (node.pos,) * len(node.names), strict=True):
            if name not in codebook.names:
                raise unknown_code(name, codebook, pos)
    elif isinstance(node, v.ShiftCode):
        _check(node.base, space, codebook, nodes)
        if node.dim >= dimension(codebook, space):
            raise error_at(f"the model's {space} code has {dimension(codebook, space)} "
                           f"dimensions (0 to {dimension(codebook, space) - 1}); dim {node.dim} "
                           "is past them", node.pos)
    elif isinstance(node, v.VectorCode):
        if node.size != dimension(codebook, space):
            raise error_at(f"the model's {space} code has {dimension(codebook, space)} numbers; "
                           f"this vector has {node.size}", node.pos)
