"""Concrete scene ``index`` of a checked recipe for a seed: ``draw_scene -> genfield.scene.Scene``.

Every draw comes from a stream of its own, ``genfield.seeds.rng(seed, index, purpose, ...)``:
the per-image constants, the camera, the light, the backdrop, the layout, each object
block's count, and per object instance (block b, instance k) its constants, pose, codes and
placement. Image i is therefore the same on every run, whichever other images are drawn
and in whatever order, and an override changes only the number it overrides.

Placement: the rotated object cube s R [-1, 1]^3 reaches s (|R20| + |R21| + |R22|) below its
centre, so an object on the floor gets that as its height and its lowest corner lies on
z = 0. The bounding sphere (radius sqrt(3) s, whatever the rotation) does the rest:
``inside`` draws the centre uniformly where the sphere's footprint (and, off the floor, the
sphere) stays in the region, so turning an object in a sweep never moves it; with
``apart`` (the default) a placement is rejected while its sphere comes nearer than ``gap``
to one already placed, up to ``tries`` times.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from genfield.errors import RecipeError
from genfield.field.codebook import CodeBook
from genfield.recipe import values as v
from genfield.recipe.codes import resolve
from genfield.recipe.names import error_at
from genfield.recipe.spec import ObjectSpec, Recipe
from genfield.render.camera import look_at, make_camera, orbit_position
from genfield.scene import (
    Backdrop,
    Camera,
    CodeChoice,
    Light,
    Pose,
    Scene,
    SceneObject,
    rotation_from_ypr,
)
from genfield.seeds import rng

SQRT3 = math.sqrt(3.0)
ROUNDS = 8  # fresh starts of a layout before placement gives up
BUDGET = 200_000  # candidate positions per scene, all objects and starts together


def check_overrides(recipe: Recipe, overrides: Mapping[str, float]) -> dict[str, float]:
    """Overrides by parameter name, each a finite number inside its parameter's bounds."""
    out: dict[str, float] = {}
    for name, value in overrides.items():
        info = recipe.parameter(name)
        try:
            x = float(value)
        except (TypeError, ValueError):
            raise RecipeError(f"the value for {name} must be a number, got {value!r}",
                              where=f"override {name}") from None
        if not math.isfinite(x):
            raise RecipeError(f"the value for {name} must be finite, got {x}",
                              where=f"override {name}")
        if info.bound is not None and not info.bound.holds(x):
            raise RecipeError(f"{name} must be {info.bound.text}, got {v.show(x, info.unit)}",
                              where=f"override {name}")
        if info.whole:
            if not x.is_integer():
                raise RecipeError(f"{name} must be a whole number, got {x:g}",
                                  where=f"override {name}")
            x = int(x)
        out[name] = x
    return out


def _json(value: Any) -> Any:
    return list(value) if isinstance(value, tuple) else value


def draw_scene(recipe: Recipe, codebook: CodeBook | None, seed: int, index: int,
               overrides: Mapping[str, float] | None = None) -> Scene:
    """Concrete scene ``index`` for ``seed``.

    Args:
        recipe: a checked recipe (``load_recipe``).
        codebook: the model's codes; None leaves code vectors empty (expressions still drawn).
        seed, index: non-negative integers; the scene depends on nothing else.
        overrides: parameter name -> value in metres, radians, pixels or plain numbers
            (``recipe.parameters()`` lists the names); each replaces what the recipe draws.
    """
    if seed < 0 or index < 0:
        raise RecipeError(f"seed and index must be >= 0, got seed {seed}, index {index}")
    fixed = check_overrides(recipe, overrides or {})
    env: dict[str, Any] = {}
    ctx = v.Context(rng(seed, index, "constants"), env, fixed)
    for c in recipe.constants:
        if not c.per_object:
            env[c.name] = v.draw(c.value, ctx)

    def stream(purpose: str, *extra: int) -> v.Context:
        return v.Context(rng(seed, index, purpose, *extra), env, fixed)

    camera = _camera(recipe, stream("camera"))
    light = _light(recipe, stream("light"))
    backdrop = _backdrop(recipe, stream("backdrop"))
    gap = float(v.draw(recipe.layout.gap, stream("layout")))
    objects = _objects(recipe, codebook, seed, index, env, fixed, gap)
    values = {c.name: _json(env[c.name]) for c in recipe.constants if not c.per_object}
    values.update(fixed)
    return Scene(index=index, seed=seed, camera=camera, objects=tuple(objects), light=light,
                 backdrop=backdrop, values=values)


def _camera(recipe: Recipe, ctx: v.Context) -> Camera:
    spec = recipe.camera
    fov = None if spec.fov is None else float(v.draw(spec.fov, ctx))
    focal = None if spec.focal is None else float(v.draw(spec.focal, ctx))
    target = np.array(v.draw(spec.target, ctx), dtype=np.float64)
    up = np.array(v.draw(spec.up, ctx), dtype=np.float64)
    if spec.orbit:
        distance, elevation, azimuth = (float(v.draw(n, ctx)) for n in
                                        (spec.distance, spec.elevation, spec.azimuth))
        position = orbit_position(target, distance, elevation, azimuth)
    else:
        position = np.array(v.draw(spec.position, ctx), dtype=np.float64)
    try:
        w2c = look_at(position, target, up)
    except ValueError as err:
        raise error_at(f"the camera cannot be placed: {err}", spec.pos,
                       hint="move it off the target, or away from straight along 'up'") from None
    if focal is not None:
        return make_camera(spec.width, spec.height, w2c, focal_px=focal)
    return make_camera(spec.width, spec.height, w2c, fov_deg=math.degrees(fov))  # type: ignore[arg-type]


def _light(recipe: Recipe, ctx: v.Context) -> Light:
    spec = recipe.light
    if spec.direction is not None:
        d = np.array(v.draw(spec.direction, ctx), dtype=np.float64)
        norm = float(np.linalg.norm(d))
        if norm < 1e-12:
            raise error_at("the light's direction is the zero vector", spec.pos)
        d = d / norm
    else:
        el, az = float(v.draw(spec.elevation, ctx)), float(v.draw(spec.azimuth, ctx))
        d = np.array([math.cos(el) * math.cos(az), math.cos(el) * math.sin(az), math.sin(el)])
    strength = float(v.draw(spec.strength, ctx))
    ambient = float(v.draw(spec.ambient, ctx))
    return Light(direction=tuple(float(x) for x in d), strength=strength, ambient=ambient,  # type: ignore[arg-type]
                 shadows=spec.shadows)


def _colour(node: Any, ctx: v.Context) -> tuple[float, float, float]:
    return tuple(min(max(float(c), 0.0), 1.0) for c in v.draw(node, ctx))  # type: ignore[return-value]


def _backdrop(recipe: Recipe, ctx: v.Context) -> Backdrop:
    spec = recipe.backdrop
    top, bottom = _colour(spec.top, ctx), _colour(spec.bottom, ctx)
    if spec.floor is None:
        return Backdrop(top_srgb=top, bottom_srgb=bottom)
    return Backdrop(top_srgb=top, bottom_srgb=bottom, floor=True, floor_srgb=_colour(spec.floor, ctx))


@dataclass
class _Pending:
    """An object instance drawn but not yet placed."""

    obj: ObjectSpec
    name: str  # "washer #2"
    scale: float
    ypr: tuple[float, float, float]
    rot: np.ndarray  # (3, 3)
    shape: CodeChoice
    appearance: CodeChoice
    place: v.Context  # its own placement stream
    centre: np.ndarray | None = None  # (3,) once placed

    @property
    def radius(self) -> float:
        return SQRT3 * self.scale  # the bounding sphere of the cube s [-1, 1]^3


def _codes(obj: ObjectSpec, ctx: v.Context, codebook: CodeBook | None) -> tuple[CodeChoice, CodeChoice]:
    def choice(vec: np.ndarray | None, expr: dict[str, Any]) -> CodeChoice:
        values = () if vec is None else tuple(float(x) for x in vec.astype(np.float32))
        return CodeChoice(values, expr)

    if obj.joint is not None:
        vec, expr = resolve(obj.joint, "joint", ctx, codebook)
        if vec is None:
            return choice(None, expr), choice(None, expr)
        ds = codebook.shape_dim  # type: ignore[union-attr]
        return choice(vec[:ds], expr), choice(vec[ds:], expr)
    shape = choice(*resolve(obj.shape, "shape", ctx, codebook))
    return shape, choice(*resolve(obj.appearance, "appearance", ctx, codebook))


def _centre(obj: ObjectSpec, scale: float, rot: np.ndarray, ctx: v.Context) -> np.ndarray:
    """One candidate centre (3,) for an object of this scale and rotation."""
    radius = SQRT3 * scale  # the bounding sphere: the same whatever the rotation
    axes = 2 if obj.on_floor else 3
    if obj.at is not None:
        xyz = list(v.draw(obj.at, ctx))
    elif obj.inside is not None:
        lo, hi = obj.inside
        xyz = []
        for axis in range(axes):
            a, b = lo[axis] + radius, hi[axis] - radius
            if a > b:
                raise error_at(f"{obj.name} (bounding radius {v.show(radius, 'length')}) does not "
                               f"fit inside its region along {v.AXES[axis]} "
                               f"({v.show(lo[axis], 'length')}..{v.show(hi[axis], 'length')})",
                               obj.pos, hint="make the region larger or the object smaller")
            xyz.append(float(ctx.rng.uniform(a, b)))
    else:
        xyz = [0.0] * axes
    if obj.on_floor:
        xyz = xyz[:2] + [scale * float(np.abs(rot[2]).sum())]  # lowest rotated corner on z = 0
    return np.array(xyz, dtype=np.float64)


def _objects(recipe: Recipe, codebook: CodeBook | None, seed: int, index: int,
             env: dict[str, Any], fixed: dict[str, float], gap: float) -> list[SceneObject]:
    pending: list[_Pending] = []
    for b, obj in enumerate(recipe.objects):
        drawn = v.draw(obj.count, v.Context(rng(seed, index, "count", b), env, fixed))
        if not float(drawn).is_integer() or not 0 <= drawn <= 1000:  # an override can do this
            raise error_at(f"{obj.name} count must be a whole number between 0 and 1000, got "
                           f"{drawn:g}", obj.pos)
        count = int(drawn)
        for k in range(count):
            local = dict(env)
            cctx = v.Context(rng(seed, index, "object-constants", b, k), local, fixed)
            for c in recipe.constants:
                if c.per_object:
                    local[c.name] = v.draw(c.value, cctx)
            pose_ctx = v.Context(rng(seed, index, "pose", b, k), local, fixed)
            scale = float(v.draw(obj.scale, pose_ctx))
            ypr = tuple(float(v.draw(n, pose_ctx)) for n in (obj.yaw, obj.pitch, obj.roll))
            shape, appearance = _codes(obj, v.Context(rng(seed, index, "codes", b, k), local,
                                                      fixed), codebook)
            pending.append(_Pending(obj, f"{obj.name} #{k + 1}", scale, ypr,  # type: ignore[arg-type]
                                    rotation_from_ypr(*ypr), shape, appearance,
                                    v.Context(rng(seed, index, "place", b, k), local, fixed)))
    _place(pending, recipe, gap)
    return [
        SceneObject(id=i + 1, label=p.obj.label, shape=p.shape, appearance=p.appearance,
                    pose=Pose.from_ypr(tuple(p.centre), *p.ypr, p.scale))  # type: ignore[arg-type]
        for i, p in enumerate(pending)
    ]


def _place(pending: list[_Pending], recipe: Recipe, gap: float) -> None:
    """Rejection sampling: the largest objects first, ``tries`` candidates each, and up to
    ROUNDS fresh starts of the whole layout before giving up with the objects' names; at most
    BUDGET candidates in all, so that no recipe can keep a worker busy for hours."""
    layout = recipe.layout
    order = sorted(pending, key=lambda p: -p.radius)  # stable: ties keep the recipe's order
    radii = np.array([p.radius for p in order])  # (n,)
    rounds = ROUNDS if layout.apart and any(p.obj.position_random for p in pending) else 1
    spent = 0
    for _ in range(rounds):
        centres = np.zeros((len(order), 3))  # (n, 3) the placed ones fill the first rows
        for k, p in enumerate(order):
            tries = layout.tries if (p.obj.position_random and layout.apart) else 1
            for _ in range(tries):
                spent += 1
                p.centre = _centre(p.obj, p.scale, p.rot, p.place)
                near = np.linalg.norm(centres[:k] - p.centre, axis=1) < radii[:k] + p.radius + gap
                if not (layout.apart and near.any()):
                    centres[k] = p.centre
                    break
                if spent >= BUDGET:
                    raise error_at(f"placement gave up after {BUDGET} candidate positions "
                                   f"({p.name} was being placed)", p.obj.pos,
                                   hint="give the objects more room or make them fewer")
            else:
                hits = [q.name for q, hit in zip(order[:k], near, strict=True) if hit]
                failed = p
                break
        else:
            return
    how = (f"in all {tries} tries of each of {rounds} starts" if failed.obj.position_random
           else "at its fixed position")
    raise error_at(
        f"cannot place {failed.name} apart from {', '.join(hits)}: its bounding sphere overlaps "
        f"{how}",
        failed.obj.pos, hint="give the objects more room (a larger region), make them smaller "
        "or fewer, or raise layout tries")
