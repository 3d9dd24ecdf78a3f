"""Sweeps: one or two parameters set to a series of values, everything else held fixed.

A sweep block (``sweep turn { cup.yaw 0deg..315deg steps 8 }``) and ``genfield sweep --vary``
both come out as a list of ``Frame``s; each frame is a set of overrides for ``draw_scene``
at one fixed (seed, index), so the frames differ only in the swept numbers. Two parameters
make a grid (every pair, the first parameter down the rows) or, with ``mode zip``, walk
their lists side by side.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

from genfield.errors import RecipeError
from genfield.recipe import ast
from genfield.recipe.formatter import format_expr
from genfield.recipe.names import error_at, unknown
from genfield.recipe.schema import BLOCKS, ParamInfo
from genfield.recipe.spec import Recipe, SweepSpec
from genfield.recipe.values import show

MAX_FRAMES = 10_000  # frames of one sweep; a sheet of more is a mistake


@dataclass(frozen=True)
class Frame:
    """One picture of a sweep: the overrides for draw_scene and a caption."""

    overrides: dict[str, float]  # parameter -> value in metres, radians, pixels or plain
    label: str  # e.g. "cup.yaw=45deg, camera.elevation=30deg"
    index: int = 0  # the scene index held fixed
    cell: tuple[int, int] = (0, 0)  # (row, column) in the strip or grid
    sweep: str = field(default="")  # the sweep block's name; "" for --vary


def _series(exprs: Sequence[ast.Expr], info: ParamInfo, lowering) -> tuple[float, ...]:
    """The values of one swept parameter, canonical units, each checked against its bounds."""
    out: list[float] = []

    def one(e: ast.Expr) -> float:
        if isinstance(e, ast.Uniform):
            raise error_at(f"a sweep takes fixed values, got the range {format_expr(e)}", e.pos,
                           hint=f"for a series write {format_expr(e)} steps N")
        node = lowering.fit_number(e, info.unit, info.name, info.bound, fixed=True)
        value = lowering.span(node)[0]
        if info.whole and not float(value).is_integer():
            raise error_at(f"{info.name} must be a whole number, got {format_expr(e)}", e.pos)
        return value

    for e in exprs:
        if isinstance(e, ast.Steps):
            if not 2 <= e.count <= MAX_FRAMES:
                raise error_at(f"steps makes 2 to {MAX_FRAMES} values, got {e.count}", e.pos)
            lo, hi = one(e.lo), one(e.hi)
            out.extend(lo + (hi - lo) * k / (e.count - 1) for k in range(e.count))
        else:
            out.append(one(e))
    return tuple(out)


def lower_sweep(block: ast.Block, i: int, params: dict[str, ParamInfo], lowering) -> SweepSpec:
    """A checked sweep block: its parameters must be the recipe's, its values fixed numbers."""
    mode, index = "grid", 0
    series: list[tuple[str, tuple[float, ...]]] = []
    schema = BLOCKS["sweep"].settings
    for s in block.settings:
        if s.key in schema:
            if len(s.values) > 1:
                raise error_at(f"'{s.key}' takes one value, got {len(s.values)}", s.values[1].pos)
            value = lowering.static(lowering.fit(s.values[0], schema[s.key], f"sweep {s.key}"))
            mode, index = (value, index) if s.key == "mode" else (mode, int(value))
            continue
        if s.key not in params:
            raise unknown("parameter", s.key, list(params), pos=s.pos)
        if len(series) == 2:
            raise error_at("a sweep varies one or two parameters", s.pos,
                           hint="use another sweep block for more")
        series.append((s.key, _series(s.values, params[s.key], lowering)))
    if not series:
        raise error_at("a sweep block names one or two parameters and their values", block.pos,
                       hint="for example: camera.azimuth 0deg..315deg steps 8")
    zipped = mode == "zip"
    frames = len(series[0][1]) * (len(series[1][1]) if len(series) == 2 and not zipped else 1)
    if frames > MAX_FRAMES:
        raise error_at(f"this sweep makes {frames} frames; at most {MAX_FRAMES}", block.pos)
    if zipped and len(series) == 2 and len(series[0][1]) != len(series[1][1]):
        raise error_at(f"mode zip walks both lists together, but {series[0][0]} has "
                       f"{len(series[0][1])} values and {series[1][0]} has {len(series[1][1])}",
                       block.pos)
    return SweepSpec(block.label or f"sweep{i + 1}", tuple(series), zipped, index, block.pos)


def _caption(name: str, value: float, info: ParamInfo) -> str:
    return f"{name}={int(value) if info.whole else show(value, info.unit)}"


def frames_of(series: Sequence[tuple[str, Sequence[float]]], params: dict[str, ParamInfo], *,
              zipped: bool, index: int, sweep: str = "") -> list[Frame]:
    """Frames for one or two (parameter, values) series: a strip, a grid or a zip."""
    if len(series) == 1 or zipped:
        count = len(series[0][1])
        return [
            Frame({n: float(vals[j]) for n, vals in series},
                  ", ".join(_caption(n, vals[j], params[n]) for n, vals in series),
                  index, (0, j), sweep)
            for j in range(count)
        ]
    (p, ps), (q, qs) = series
    return [
        Frame({p: float(a), q: float(b)},
              f"{_caption(p, a, params[p])}, {_caption(q, b, params[q])}", index, (r, c), sweep)
        for r, a in enumerate(ps)
        for c, b in enumerate(qs)
    ]


def _vary_values(recipe: Recipe, name: str, values: str | Sequence[float | str]) -> tuple[float, ...]:
    """``--vary`` values: recipe text ("0deg, 90deg" or "0deg..90deg steps 4") or numbers
    already in canonical units (metres, radians)."""
    from genfield.recipe.lower import Lowering
    from genfield.recipe.parser import parse_text

    info = recipe.parameter(name)
    lowering = Lowering({}, {})
    out: list[float] = []
    for x in [values] if isinstance(values, str) else values:
        if isinstance(x, str):
            try:  # read as a sweep block's line; a column counts as in "PARAM=VALUES"
                program = parse_text(f"{name} {x}\n", "--vary")
                setting = program.statements[0] if len(program.statements) == 1 else None
                if not isinstance(setting, ast.Setting):
                    raise RecipeError(f"cannot read the values {x!r} for {name}", where="--vary")
                out.extend(_series(setting.values, info, lowering))
            except RecipeError as err:
                err.context = None  # the user typed one option, not this line: one line says it
                raise
        else:
            value = float(x)
            if info.bound is not None and not info.bound.holds(value):
                raise RecipeError(f"{name} must be {info.bound.text}, got "
                                  f"{show(value, info.unit)}", where="--vary")
            out.append(value)
    if not out:
        raise RecipeError(f"no values given for {name}", where="--vary")
    return tuple(out)


def sweep_frames(recipe: Recipe, vary: Sequence[tuple[str, str | Sequence[float | str]]] = (),
                 *, zipped: bool = False, index: int = 0, name: str | None = None) -> list[Frame]:
    """The frames of a sweep.

    Args:
        recipe: a checked recipe.
        vary: one or two (parameter, values); values are recipe text such as
            "0deg, 45deg, 90deg" or "0deg..315deg steps 8", or numbers in metres/radians.
            Empty: the recipe's own sweep blocks (all of them, or the one called ``name``).
        zipped: with two parameters, walk the lists together instead of making a grid.
        index: the scene index held fixed for ``vary`` (sweep blocks state their own).
    """
    if vary:
        if len(vary) > 2:
            raise RecipeError("a sweep varies one or two parameters", where="--vary")
        series = [(p, _vary_values(recipe, p, vals)) for p, vals in vary]
        if zipped and len(series) == 2 and len(series[0][1]) != len(series[1][1]):
            raise RecipeError(f"zipped lists must be as long as each other: {series[0][0]} has "
                              f"{len(series[0][1])} values, {series[1][0]} {len(series[1][1])}",
                              where="--vary")
        frames = len(series[0][1]) * (len(series[1][1]) if len(series) == 2 and not zipped else 1)
        if frames > MAX_FRAMES:
            raise RecipeError(f"this sweep makes {frames} frames; at most {MAX_FRAMES}",
                              where="--vary")
        return frames_of(series, recipe.params, zipped=zipped, index=index)
    chosen = list(recipe.sweeps)
    if name is not None:
        chosen = [s for s in recipe.sweeps if s.name == name]
        if not chosen:
            raise unknown("sweep", name, [s.name for s in recipe.sweeps], where=str(recipe.path))
    if not chosen:
        raise RecipeError("the recipe has no sweep block", where=str(recipe.path),
                          hint="add one, or name parameters to vary")
    frames: list[Frame] = []
    for s in chosen:
        frames += frames_of(s.params, recipe.params, zipped=s.zipped, index=s.index, sweep=s.name)
    return frames
