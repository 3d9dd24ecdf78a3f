"""The checked recipe: every value typed, in canonical units, ready to draw scenes from.

A ``Recipe`` compares equal to another when they say the same thing (the file name, text
and layout aside); the formatter's round trip is tested with that equality.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from genfield.recipe import ast
from genfield.recipe.schema import ParamInfo


@dataclass(frozen=True)
class DatasetSpec:
    count: int  # images in the dataset
    seed: int
    splits: dict[str, float]  # {"train": f, "val": f, "test": f}, summing to 1
    outputs: frozenset[str]  # e.g. {"image", "mask", "depth"}
    detail: float = 2.0  # grid cells per pixel (genfield.render.options.RenderOptions.cells_per_pixel)


@dataclass(frozen=True)
class ConstantSpec:
    name: str
    value: Any  # a value node (genfield.recipe.values)
    kind: str  # number, vector, box, colour, text
    unit: str | None
    per_object: bool
    pos: ast.Pos = field(compare=False, repr=False)


@dataclass(frozen=True)
class CameraSpec:
    width: int
    height: int
    fov: Any | None  # radians (horizontal), or None when focal is given
    focal: Any | None  # pixels
    target: Any
    up: Any
    orbit: bool  # True: distance/elevation/azimuth; False: position
    distance: Any | None
    elevation: Any | None
    azimuth: Any | None
    position: Any | None
    pos: ast.Pos = field(compare=False, repr=False)


@dataclass(frozen=True)
class LightSpec:
    direction: Any | None  # a vector, or None when given by angles
    elevation: Any | None
    azimuth: Any | None
    strength: Any
    ambient: Any
    shadows: bool
    pos: ast.Pos = field(compare=False, repr=False)


@dataclass(frozen=True)
class BackdropSpec:
    top: Any  # sRGB colour nodes
    bottom: Any
    floor: Any | None
    pos: ast.Pos = field(compare=False, repr=False)


@dataclass(frozen=True)
class LayoutSpec:
    apart: bool
    gap: Any  # metres
    tries: int


@dataclass(frozen=True)
class ObjectSpec:
    """One object block. Codes: ``joint`` (asset X), or ``shape`` and ``appearance``."""

    name: str
    label: str
    count: Any
    joint: Any | None
    shape: Any | None
    appearance: Any | None
    scale: Any
    yaw: Any
    pitch: Any
    roll: Any
    at: Any | None  # a vector node of 2 (on the floor) or 3 parts
    inside: tuple[tuple[float, ...], tuple[float, ...]] | None  # box corners, metres
    on_floor: bool
    position_random: bool  # whether a retry can land elsewhere
    pos: ast.Pos = field(compare=False, repr=False)
    code_text: tuple[tuple[str, str], ...] = field(default=(), compare=False)  # (setting, text)


@dataclass(frozen=True)
class SweepSpec:
    """A sweep block: one or two parameters and their series of values (canonical units)."""

    name: str
    params: tuple[tuple[str, tuple[float, ...]], ...]
    zipped: bool
    index: int
    pos: ast.Pos = field(compare=False, repr=False)


@dataclass(frozen=True)
class Recipe:
    """A parsed, included and checked recipe."""

    path: Path = field(compare=False)
    text: str = field(compare=False, repr=False)  # every file's text, includes after the top
    model_path: Path | None = field(compare=False)
    dataset: DatasetSpec
    classes: tuple[str, ...]
    constants: tuple[ConstantSpec, ...]
    camera: CameraSpec
    light: LightSpec
    backdrop: BackdropSpec
    layout: LayoutSpec
    objects: tuple[ObjectSpec, ...]
    sweeps: tuple[SweepSpec, ...]
    params: dict[str, ParamInfo] = field(repr=False)
    program: ast.Program = field(compare=False, repr=False)  # the top file, for the formatter
    files: tuple[Path, ...] = field(compare=False, default=())  # the top file and its includes

    def parameters(self) -> list[str]:
        """Every sweepable number, in the order the recipe defines them."""
        return list(self.params)

    def parameter(self, name: str) -> ParamInfo:
        """One parameter's unit, bounds and source; raises RecipeError (did you mean) if unknown."""
        from genfield.recipe.names import unknown

        if name not in self.params:
            raise unknown("parameter", name, list(self.params), where=str(self.path))
        return self.params[name]
