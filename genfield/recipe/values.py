"""Checked values: numbers in metres and radians, the draws over them, and drawing them.

The checker turns every value of a recipe into one of these small frozen nodes; drawing a
concrete scene evaluates them with one numpy Generator. Each draw consumes a fixed number
of variates from its stream (one for a uniform, a normal, a whole range or a pick), so the
numbers a scene gets do not depend on what was overridden elsewhere.

``Param`` marks a sweepable number: the draw always happens (keeping the stream in step)
and an override, when given, replaces its result.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from genfield.recipe.ast import NOWHERE, Pos

# unit -> (kind, factor to the canonical unit: metres, radians, pixels, plain)
UNITS: dict[str, tuple[str, float]] = {
    "m": ("length", 1.0),
    "cm": ("length", 0.01),
    "mm": ("length", 0.001),
    "deg": ("angle", math.pi / 180.0),
    "rad": ("angle", 1.0),
    "px": ("pixels", 1.0),
    "": ("plain", 1.0),
}
KIND_WORDS = {
    "length": "a length (m, cm or mm)",
    "angle": "an angle (deg or rad)",
    "pixels": "a number of pixels (px)",
    "plain": "a plain number",
}
KIND_SHORT = {"length": "a length", "angle": "an angle", "pixels": "pixels", "plain": "a plain number"}
KIND_EXAMPLES = {"length": "5cm", "angle": "30deg", "pixels": "200px", "plain": "0.5"}


def show(value: float, kind: str) -> str:
    """A canonical number back in the unit a person would write (cm below a metre, degrees)."""
    if kind == "length":
        return f"{value * 100:.6g}cm" if abs(value) < 1.0 else f"{value:.6g}m"
    if kind == "angle":
        return f"{math.degrees(value):.6g}deg"
    if kind == "pixels":
        return f"{value:.6g}px"
    return f"{value:.6g}"


# ---- nodes --------------------------------------------------------------------------------


@dataclass(frozen=True)
class Fixed:
    """A value known when checking: a float, a tuple of floats, a text or a flag."""

    value: Any


@dataclass(frozen=True)
class Uniform:
    """Uniform on [lo, hi] (canonical units)."""

    lo: float
    hi: float


@dataclass(frozen=True)
class Box:
    """A point uniform in the axis-aligned box [lo, hi] (one uniform per axis)."""

    lo: tuple[float, ...]
    hi: tuple[float, ...]


@dataclass(frozen=True)
class Blend:
    """A colour on the straight line between two sRGB colours: lo + u (hi - lo), u uniform."""

    lo: tuple[float, float, float]
    hi: tuple[float, float, float]


@dataclass(frozen=True)
class Whole:
    """A whole number from lo to hi, both included, equally likely."""

    lo: int
    hi: int


@dataclass(frozen=True)
class Normal:
    """Normal(mean, sd), clipped to [lo, hi] when a clamp is given."""

    mean: float
    sd: float
    lo: float | None = None
    hi: float | None = None


@dataclass(frozen=True)
class Pick:
    """One option, chosen with the probabilities (which sum to 1)."""

    options: tuple[Any, ...]
    probabilities: tuple[float, ...]


@dataclass(frozen=True)
class Tuple:
    """A vector whose parts may be drawn."""

    items: tuple[Any, ...]


@dataclass(frozen=True)
class ConstantRef:
    """The current value of a named constant."""

    name: str


@dataclass(frozen=True)
class Param:
    """A sweepable number: drawn as ``inner``, replaced by ``overrides[name]`` when present."""

    name: str
    inner: Any
    pos: Pos = field(default=NOWHERE, compare=False, repr=False)


@dataclass(frozen=True)
class ParamVec:
    """A sweepable vector: parts ``name.x``, ``name.y``, ``name.z`` may each be overridden."""

    name: str
    inner: Any
    size: int
    pos: Pos = field(default=NOWHERE, compare=False, repr=False)


AXES = ("x", "y", "z")


# ---- code expressions (resolved against a model's code table by genfield.recipe.codes) ----


@dataclass(frozen=True)
class NamedCode:
    """The code of a named asset; ``name`` is a node that draws a text."""

    name: Any
    pos: Pos = field(default=NOWHERE, compare=False, repr=False)


@dataclass(frozen=True)
class PriorCode:
    """A draw from the model's prior with its spread scaled by ``temperature``."""

    temperature: Any
    pos: Pos = field(default=NOWHERE, compare=False, repr=False)
    text: str = field(default="1 (default)", compare=False, repr=False)  # the temperature as written


@dataclass(frozen=True)
class MixCode:
    """Named codes blended with weights (normalised to sum 1), linearly or on the sphere."""

    names: tuple[str, ...]
    weights: tuple[Any, ...]
    spherical: bool
    pos: Pos = field(default=NOWHERE, compare=False, repr=False)
    name_pos: tuple[Pos, ...] = field(default=(), compare=False, repr=False)
    texts: tuple[str, ...] = field(default=(), compare=False, repr=False)  # weights as written


@dataclass(frozen=True)
class ShiftCode:
    """``base`` moved by ``by`` along dimension ``dim`` (0-based)."""

    base: Any
    dim: int
    by: Any
    pos: Pos = field(default=NOWHERE, compare=False, repr=False)
    text: str = field(default="", compare=False, repr=False)  # the offset as written


@dataclass(frozen=True)
class VectorCode:
    """A code written out in full."""

    items: Any
    size: int
    pos: Pos = field(default=NOWHERE, compare=False, repr=False)


# ---- drawing ------------------------------------------------------------------------------


@dataclass
class Context:
    """What a draw needs: its stream, the constants drawn so far, the overrides."""

    rng: np.random.Generator
    env: Mapping[str, Any]
    overrides: Mapping[str, float]


def draw(node: Any, ctx: Context) -> Any:
    """Evaluate a value node: a float, a tuple of floats, a text or a flag."""
    if isinstance(node, Fixed):
        return node.value
    if isinstance(node, Uniform):
        return float(ctx.rng.uniform(node.lo, node.hi))
    if isinstance(node, Box):
        u = ctx.rng.random(len(node.lo))  # (axes,)
        return tuple(float(lo + (hi - lo) * t) for lo, hi, t in zip(node.lo, node.hi, u, strict=True))
    if isinstance(node, Blend):
        t = float(ctx.rng.random())
        return tuple(lo + (hi - lo) * t for lo, hi in zip(node.lo, node.hi, strict=True))
    if isinstance(node, Whole):
        return int(ctx.rng.integers(node.lo, node.hi, endpoint=True))
    if isinstance(node, Normal):
        x = float(ctx.rng.normal(node.mean, node.sd))
        return x if node.lo is None else min(max(x, node.lo), node.hi)  # type: ignore[type-var]
    if isinstance(node, Pick):
        return draw(node.options[choose(node, ctx.rng)], ctx)
    if isinstance(node, Tuple):
        return tuple(draw(item, ctx) for item in node.items)
    if isinstance(node, ConstantRef):
        return ctx.env[node.name]
    if isinstance(node, Param):
        value = draw(node.inner, ctx)
        return ctx.overrides.get(node.name, value)
    if isinstance(node, ParamVec):
        value = list(draw(node.inner, ctx))
        for i, axis in enumerate(AXES[: node.size]):
            value[i] = ctx.overrides.get(f"{node.name}.{axis}", value[i])
        return tuple(value)
    raise TypeError(f"not a value node: {node!r}")


def choose(node: Pick, rng: np.random.Generator) -> int:
    """The index a pick lands on (one uniform variate)."""
    return int(rng.choice(len(node.probabilities), p=node.probabilities))


# ---- what a value can be, without drawing ------------------------------------------------


def support(node: Any, constants: Mapping[str, tuple[float, float]]) -> tuple[float, float]:
    """The smallest interval holding every value a scalar node can draw (overrides aside)."""
    if isinstance(node, Fixed):
        return float(node.value), float(node.value)
    if isinstance(node, Uniform):
        return node.lo, node.hi
    if isinstance(node, Whole):
        return float(node.lo), float(node.hi)
    if isinstance(node, Normal):
        if node.lo is None:
            return (-math.inf, math.inf) if node.sd > 0 else (node.mean, node.mean)
        return node.lo, node.hi  # type: ignore[return-value]
    if isinstance(node, Pick):
        spans = [support(option, constants) for option in node.options]
        return min(s[0] for s in spans), max(s[1] for s in spans)
    if isinstance(node, ConstantRef):
        return constants[node.name]
    if isinstance(node, Param):
        return support(node.inner, constants)
    raise TypeError(f"not a scalar node: {node!r}")


def refs(node: Any) -> set[str]:
    """Names of the constants a node reads, at any depth."""
    if isinstance(node, ConstantRef):
        return {node.name}
    out: set[str] = set()
    if hasattr(node, "__dataclass_fields__") and not isinstance(node, Pos):
        for name in node.__dataclass_fields__:
            part = getattr(node, name)
            for item in part if isinstance(part, tuple) else (part,):
                out |= refs(item)
    return out


def is_random(node: Any, random_constants: set[str]) -> bool:
    """True when a node can draw more than one value."""
    return _varies(node, random_constants, continuum=False)


def is_continuous(node: Any, continuous_constants: set[str]) -> bool:
    """True when a node draws from a continuum, so that no value is expected twice: a code
    built on one is new in every draw (baked every time, never served from a cache)."""
    return _varies(node, continuous_constants, continuum=True)


def _varies(node: Any, varying: set[str], *, continuum: bool) -> bool:
    """``is_random``, or with ``continuum`` ``is_continuous``: the two differ only where a
    node has finitely many values (whole numbers, picks among fixed options, names)."""
    def again(n: Any) -> bool:
        return _varies(n, varying, continuum=continuum)

    if isinstance(node, Fixed):
        return False
    if isinstance(node, Uniform):
        return node.hi > node.lo
    if isinstance(node, Box):
        return any(h > lo for lo, h in zip(node.lo, node.hi, strict=True))
    if isinstance(node, Blend):
        return node.lo != node.hi
    if isinstance(node, Whole):
        return not continuum and node.hi > node.lo
    if isinstance(node, Normal):
        return node.sd > 0 and (node.lo is None or node.hi > node.lo)  # type: ignore[operator]
    if isinstance(node, Pick):
        live = [o for o, p in zip(node.options, node.probabilities, strict=True) if p > 0]
        return (not continuum and len(set(map(repr, live))) > 1) or any(again(o) for o in live)
    if isinstance(node, ConstantRef):
        return node.name in varying
    if isinstance(node, Tuple):
        return any(again(item) for item in node.items)
    if isinstance(node, (Param, ParamVec)):
        return again(node.inner)
    if isinstance(node, PriorCode):
        return True
    if isinstance(node, NamedCode):
        return not continuum and again(node.name)  # a name: finitely many values
    if isinstance(node, MixCode):
        return any(again(w) for w in node.weights)
    if isinstance(node, ShiftCode):
        return again(node.base) or again(node.by)
    if isinstance(node, VectorCode):
        return again(node.items)
    raise TypeError(f"not a value node: {node!r}")
