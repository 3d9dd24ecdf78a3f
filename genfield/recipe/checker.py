"""The semantic checker: statements of a recipe (includes already inlined) to a ``Recipe``.

It finds unknown and duplicate names (with "did you mean"), wrong types and units,
impossible values, settings that exclude each other, and scope mistakes (a per-object
constant used by the camera). Every sweepable number is wrapped in a ``Param`` named
``block.setting`` (``camera.azimuth``, ``cup.yaw``, ``cup.at.x``), ``object.slot.wN`` and
``object.slot.dimK`` for code weights and offsets, or the constant's own name.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from genfield.recipe import ast
from genfield.recipe import values as v
from genfield.recipe.formatter import format_expr
from genfield.recipe.lower import Known, Lowering
from genfield.recipe.names import error_at, unknown
from genfield.recipe.schema import BLOCKS, TOP_SETTINGS, Bound, ParamInfo
from genfield.recipe.spec import (
    BackdropSpec,
    CameraSpec,
    ConstantSpec,
    DatasetSpec,
    LayoutSpec,
    LightSpec,
    ObjectSpec,
    Recipe,
)
from genfield.recipe.sweeps import lower_sweep
from genfield.scene import Backdrop, Light

_SINGLE = ("dataset", "camera", "light", "backdrop", "layout")
_DEFAULT_LIGHT = Light()
_AT_LEAST_0 = Bound(0.0, text=">= 0")


@dataclass
class _Block:
    """A block's settings by key, after duplicate checks."""

    block: ast.Block
    settings: dict[str, ast.Setting]


class Checker:
    def __init__(self, statements: list[ast.Statement]) -> None:
        self.statements = statements
        later = {s.name: s.pos for s in statements if isinstance(s, ast.Constant)}
        self.known: dict[str, Known] = {}
        self.nodes: dict[str, object] = {}
        self.lower = Lowering(self.known, later, self.nodes)
        self.params: dict[str, ParamInfo] = {}
        self.constants: list[ConstantSpec] = []
        self.per_object: set[str] = set()

    # ---- parameters ----

    def _param(self, name: str, node: object, unit: str, source: str, pos: ast.Pos, *,
               bound: Bound | None = None, whole: bool = False, size: int = 0,
               per_object: bool = False, expr: ast.Expr | None = None) -> object:
        """Wrap a number (or each part of a vector) as a sweepable parameter."""
        random = self.lower.random(node)
        if size:
            for i, axis in enumerate(v.AXES[:size]):
                part_random, part_source = random, source
                if isinstance(node, v.Tuple):
                    part_random = self.lower.random(node.items[i])
                elif isinstance(node, v.Box):
                    part_random = node.hi[i] > node.lo[i]
                elif isinstance(node, v.Fixed):
                    part_random = False
                if isinstance(expr, ast.Vector):
                    part_source = format_expr(expr.items[i])
                self.params[f"{name}.{axis}"] = ParamInfo(
                    f"{name}.{axis}", unit, None, False, part_random, part_source, per_object,
                    pos.where)
            return v.ParamVec(name, node, size, pos=pos)
        self.params[name] = ParamInfo(name, unit, bound, whole, random, source, per_object,
                                      pos.where)
        return v.Param(name, node, pos=pos)

    def _code_params(self, node: object, prefix: str, per_object: bool) -> object:
        """Name a code's numbers: prefix.temperature, prefix.w1.., prefix.dimK."""
        if isinstance(node, v.PriorCode):
            t = self._param(f"{prefix}.temperature", node.temperature, "plain", node.text,
                            node.pos, bound=_AT_LEAST_0, per_object=per_object)
            return v.PriorCode(t, pos=node.pos, text=node.text)
        if isinstance(node, v.MixCode):
            weights = tuple(
                self._param(f"{prefix}.w{i + 1}", w, "plain", text, node.pos,
                            bound=_AT_LEAST_0, per_object=per_object)
                for i, (w, text) in enumerate(zip(node.weights, node.texts, strict=True))
            )
            return v.MixCode(node.names, weights, node.spherical, pos=node.pos,
                             name_pos=node.name_pos, texts=node.texts)
        if isinstance(node, v.ShiftCode):
            base = self._code_params(node.base, prefix, per_object)
            name = f"{prefix}.dim{node.dim}"
            if name in self.params:
                raise error_at(f"dimension {node.dim} is shifted twice", node.pos)
            by = self._param(name, node.by, "plain", node.text, node.pos, per_object=per_object)
            return v.ShiftCode(base, node.dim, by, pos=node.pos, text=node.text)
        if isinstance(node, v.Pick):
            options = tuple(self._code_params(o, prefix, per_object) for o in node.options)
            return v.Pick(options, node.probabilities)
        return node

    # ---- constants ----

    def _constant(self, c: ast.Constant) -> None:
        if c.name in self.known:
            first = self.known[c.name].pos
            raise error_at(f"'{c.name}' is defined twice (first at line {first.line})", c.pos)
        if c.scope not in (None, "object", "image"):
            raise error_at(f"a constant is drawn 'per image' or 'per object', got 'per {c.scope}'",
                           c.scope_pos)
        typed = self.lower.infer(c.value)
        kind = typed.type.kind
        if kind == "code":
            raise error_at("a constant holds a value; write code expressions (prior, lerp, "
                           "slerp, shift) in an object's settings", c.value.pos,
                           hint="a constant may hold a code's name or a pick of names")
        per_object = c.scope == "object"
        uses = v.refs(typed.node)
        for name in sorted(uses & self.per_object):
            if not per_object:
                raise error_at(f"'{c.name}' is drawn once per image but uses '{name}', which is "
                               "drawn per object", c.value.pos, hint=f"write {c.name} = ... per object")
        node = typed.node
        source = format_expr(c.value)
        if kind == "number":
            node = self._param(c.name, node, typed.type.unit or "plain", source, c.pos,
                               per_object=per_object)
        elif kind == "vector":
            node = self._param(c.name, node, typed.type.unit or "plain", source, c.pos,
                               size=typed.type.size, per_object=per_object, expr=c.value)
        span = self.lower.span(typed.node) if kind == "number" else None
        self.known[c.name] = Known(typed.type, span, self.lower.random(typed.node), per_object,
                                   c.pos)
        self.nodes[c.name] = typed.node
        if per_object:
            self.per_object.add(c.name)
        self.constants.append(ConstantSpec(c.name, node, kind, typed.type.unit, per_object, c.pos))

    # ---- blocks ----

    def _gather(self, b: ast.Block) -> _Block:
        schema = BLOCKS[b.kind]
        seen: dict[str, ast.Setting] = {}
        for s in b.settings:
            if s.key in seen:
                raise error_at(f"{b.kind} sets '{s.key}' twice (first at line "
                               f"{seen[s.key].pos.line})", s.pos)
            if b.kind != "sweep" and s.key not in schema.settings:
                elsewhere = [k for k, other in BLOCKS.items() if s.key in other.settings]
                extra = f"'{s.key}' belongs in a {elsewhere[0]} block" if elsewhere else None
                raise unknown(f"{b.kind} setting", s.key, list(schema.settings), pos=s.pos,
                              extra=extra)
            slot = schema.settings.get(s.key)
            if slot is not None and not slot.many and len(s.values) > 1:
                raise error_at(f"'{s.key}' takes one value, got {len(s.values)}", s.values[1].pos)
            seen[s.key] = s
        return _Block(b, seen)

    def _value(self, g: _Block, key: str, context: str, *, per_object_ok: bool = False) -> object | None:
        s = g.settings.get(key)
        if s is None:
            return None
        slot = BLOCKS[g.block.kind].settings[key]
        node = self.lower.fit(s.values[0], slot, f"{context} {key}".strip())
        if not per_object_ok:
            for name in sorted(v.refs(node) & self.per_object):
                raise error_at(f"'{name}' is drawn per object, but {context} {key} is drawn once "
                               "per image", s.values[0].pos)
        return node

    def _number(self, g: _Block, key: str, prefix: str, default: float, *,
                per_object: bool = False) -> object:
        slot = BLOCKS[g.block.kind].settings[key]
        node = self._value(g, key, prefix, per_object_ok=per_object)
        s = g.settings.get(key)
        source = format_expr(s.values[0]) if s else f"{v.show(default, slot.unit)} (default)"
        pos = s.values[0].pos if s else g.block.pos
        return self._param(f"{prefix}.{key}", v.Fixed(default) if node is None else node,
                           slot.unit, source, pos, bound=slot.bound, whole=slot.type == "whole",
                           per_object=per_object)

    def _vector(self, g: _Block, key: str, prefix: str, default: tuple | None, *,
                per_object: bool = False) -> object | None:
        slot = BLOCKS[g.block.kind].settings[key]
        node = self._value(g, key, prefix, per_object_ok=per_object)
        s = g.settings.get(key)
        if node is None and default is None:
            return None
        node = v.Fixed(default) if node is None else node
        size = len(default) if s is None else self.lower.infer(s.values[0]).type.size
        source = format_expr(s.values[0]) if s else "(" + ", ".join(
            v.show(x, slot.unit) for x in default) + ") (default)"  # type: ignore[union-attr]
        pos = s.values[0].pos if s else g.block.pos
        return self._param(f"{prefix}.{key}", node, slot.unit, source, pos, size=size,
                           per_object=per_object, expr=s.values[0] if s else None)

    def _fixed(self, g: _Block, key: str, default):
        node = self._value(g, key, g.block.kind)
        return default if node is None else self.lower.static(node)

    def _exclusive(self, g: _Block, first: tuple[str, ...], second: tuple[str, ...], why: str) -> None:
        a = [k for k in first if k in g.settings]
        b = [k for k in second if k in g.settings]
        if a and b:
            who = g.block.label or g.block.kind
            raise error_at(f"{who} sets {a[0]} and {b[0]}: {why}", g.settings[b[0]].pos)

    def _dataset(self, g: _Block | None) -> DatasetSpec:
        if g is None:
            return DatasetSpec(100, 0, {"train": 0.8, "val": 0.1, "test": 0.1},
                               frozenset({"image", "mask"}))
        splits = {k: self._fixed(g, k, None) for k in ("train", "val", "test")}
        if all(x is None for x in splits.values()):
            splits = {"train": 0.8, "val": 0.1, "test": 0.1}
        splits = {k: (0.0 if x is None else float(x)) for k, x in splits.items()}
        total = sum(splits.values())
        if abs(total - 1.0) > 1e-9:
            parts = " + ".join(f"{k} {x:g}" for k, x in splits.items())
            raise error_at(f"the splits must add up to 1, got {parts} = {total:g}", g.block.pos)
        outputs = frozenset({"image", "mask"})
        if "outputs" in g.settings:
            slot = BLOCKS["dataset"].settings["outputs"]
            outputs = frozenset(self.lower.static(self.lower.fit(e, slot, "outputs"))
                                for e in g.settings["outputs"].values)
        return DatasetSpec(int(self._fixed(g, "images", 100)), int(self._fixed(g, "seed", 0)),
                           splits, outputs, float(self._fixed(g, "detail", DatasetSpec.detail)))

    def _camera(self, g: _Block) -> CameraSpec:
        self._exclusive(g, ("fov",), ("focal",), "give one of them")
        self._exclusive(g, ("position",), ("distance", "elevation", "azimuth"),
                        "a camera is placed by position, or by distance, elevation and azimuth "
                        "around its target, not both")
        width, height = self._fixed(g, "size", (128, 128))
        if not (1 <= width <= 8192 and 1 <= height <= 8192):
            raise error_at(f"an image size is 1 to 8192 pixels a side, got {width}x{height}",
                           g.settings["size"].pos)
        orbit = "position" not in g.settings
        focal = self._number(g, "focal", "camera", 0.0) if "focal" in g.settings else None
        fov = None if focal is not None else self._number(g, "fov", "camera", math.radians(40.0))
        return CameraSpec(
            width, height, fov, focal,
            target=self._vector(g, "target", "camera", (0.0, 0.0, 0.0)),
            up=self._vector(g, "up", "camera", (0.0, 0.0, 1.0)),
            orbit=orbit,
            distance=self._number(g, "distance", "camera", 1.0) if orbit else None,
            elevation=self._number(g, "elevation", "camera", math.radians(30.0)) if orbit else None,
            azimuth=self._number(g, "azimuth", "camera", math.radians(45.0)) if orbit else None,
            position=None if orbit else self._vector(g, "position", "camera", None),
            pos=g.block.pos,
        )

    def _light(self, g: _Block) -> LightSpec:
        self._exclusive(g, ("direction",), ("elevation", "azimuth"),
                        "give the light's direction as a vector or as two angles, not both")
        by_angles = "direction" not in g.settings
        d = _DEFAULT_LIGHT.direction
        return LightSpec(
            direction=None if by_angles else self._vector(g, "direction", "light", None),
            elevation=self._number(g, "elevation", "light", math.asin(d[2])) if by_angles else None,
            azimuth=self._number(g, "azimuth", "light", math.atan2(d[1], d[0])) if by_angles else None,
            strength=self._number(g, "strength", "light", _DEFAULT_LIGHT.strength),
            ambient=self._number(g, "ambient", "light", _DEFAULT_LIGHT.ambient),
            shadows=bool(self._fixed(g, "shadows", False)),
            pos=g.block.pos,
        )

    def _backdrop(self, g: _Block) -> BackdropSpec:
        self._exclusive(g, ("colour",), ("top", "bottom"), "one colour, or a top-to-bottom "
                        "gradient")
        if ("top" in g.settings) != ("bottom" in g.settings):
            missing = "bottom" if "top" in g.settings else "top"
            raise error_at(f"a gradient needs both top and bottom; {missing} is missing",
                           g.block.pos)
        base = Backdrop()
        colour = self._value(g, "colour", "backdrop")
        top = colour or self._value(g, "top", "backdrop") or v.Fixed(base.top_srgb)
        bottom = colour or self._value(g, "bottom", "backdrop") or v.Fixed(base.bottom_srgb)
        return BackdropSpec(top, bottom, self._value(g, "floor", "backdrop"), g.block.pos)

    def _layout(self, g: _Block) -> LayoutSpec:
        gap = self._number(g, "gap", "layout", 0.0)
        return LayoutSpec(bool(self._fixed(g, "apart", True)), gap, int(self._fixed(g, "tries", 200)))

    def _object(self, g: _Block) -> ObjectSpec:
        b, name = g.block, g.block.label or ""
        if b.quoted or not name:
            raise error_at("an object block is named with one word, like object cup { ... }",
                           b.label_pos if b.quoted else b.pos,
                           hint='the name is the class label; for another label write label "hex nut"')
        self._exclusive(g, ("asset",), ("shape", "appearance"),
                        "asset gives both codes; for another appearance write asset X wearing Y")
        self._exclusive(g, ("at",), ("inside",), "give a position or a region, not both")
        count = self._number(g, "count", name, 1)
        codes = self._codes(g, name)
        pose = {key: self._number(g, key, name, default, per_object=True)
                for key, default in (("scale", 0.05), ("yaw", 0.0), ("pitch", 0.0), ("roll", 0.0))}
        on_floor = "on" in g.settings
        at = self._vector(g, "at", name, None, per_object=True)
        for key in ("at", "inside"):
            if key in g.settings:
                size = self.lower.infer(g.settings[key].values[0]).type.size
                if size != (2 if on_floor else 3):
                    what = "(x, y): its height comes from the floor" if on_floor else \
                        "(x, y, z), or add 'on floor' to rest it on the floor"
                    raise error_at(f"{name} {key} needs {what}", g.settings[key].values[0].pos)
        inside = None
        if "inside" in g.settings:
            node = self._value(g, "inside", name, per_object_ok=True)
            box = self.nodes.get(node.name) if isinstance(node, v.ConstantRef) else node
            if not isinstance(box, v.Box):
                raise error_at(f"{name} inside needs a box like (-10cm, -10cm)..(10cm, 10cm)",
                               g.settings["inside"].values[0].pos)
            inside = (box.lo, box.hi)
        label = self._fixed(g, "label", name)
        if not label.strip():
            raise error_at("a class label cannot be empty", g.settings["label"].values[0].pos)
        return ObjectSpec(
            name=name, label=label,
            count=count,
            joint=codes[0], shape=codes[1], appearance=codes[2],
            scale=pose["scale"], yaw=pose["yaw"], pitch=pose["pitch"], roll=pose["roll"],
            at=at, inside=inside, on_floor=on_floor,
            # constants stay put between placement tries; only draws written in 'at' move
            position_random=inside is not None or (at is not None and v.is_random(at, set())),
            pos=b.pos,
            code_text=tuple((k, format_expr(g.settings[k].values[0]))
                            for k in ("asset", "shape", "appearance") if k in g.settings),
        )

    def _codes(self, g: _Block, name: str) -> tuple[object | None, object | None, object | None]:
        """(joint, shape, appearance) code nodes of an object."""
        def code(e: ast.Expr, slot_name: str) -> object:
            node = self.lower.fit(e, BLOCKS["object"].settings["shape"], f"{name} {slot_name}")
            return self._code_params(node, f"{name}.{slot_name}", True)

        if "asset" in g.settings:
            e = g.settings["asset"].values[0]
            if isinstance(e, ast.Wearing):
                return None, code(e.shape, "asset"), code(e.appearance, "wearing")
            return code(e, "asset"), None, None
        if "shape" not in g.settings and "appearance" not in g.settings:
            raise error_at(f"object {name} needs its codes: asset CODE, or shape CODE and "
                           "appearance CODE", g.block.pos)
        for have, missing in (("shape", "appearance"), ("appearance", "shape")):
            if have in g.settings and missing not in g.settings:
                raise error_at(f"object {name} has a {have} but no {missing}", g.block.pos,
                               hint=f"add {missing} CODE, or write asset X wearing Y")
        shape = code(g.settings["shape"].values[0], "shape")
        return None, shape, code(g.settings["appearance"].values[0], "appearance")

    # ---- the whole recipe ----

    def check(self, *, path: Path, text: str, program: ast.Program, files: tuple[Path, ...],
              model_override: Path | None,
              resolve: Callable[[str, ast.Pos, str], Path]) -> Recipe:
        """The checked recipe; ``resolve(relative, pos, what)`` turns a path it names into one
        inside the recipe's folder."""
        blocks: dict[str, list[_Block]] = {k: [] for k in BLOCKS}
        top: dict[str, ast.Setting] = {}
        for st in self.statements:
            if isinstance(st, ast.Constant):
                self._constant(st)
            elif isinstance(st, ast.Setting):
                if st.key not in TOP_SETTINGS:
                    hint = (f"to define a constant write {st.key} = ..." if "." not in st.key
                            else None)
                    if st.key in BLOCKS:
                        hint = f"{st.key} is a block: {st.key} {{ ... }}"
                    raise unknown("top-level setting", st.key, list(TOP_SETTINGS), pos=st.pos,
                                  extra=hint)
                if st.key in top:
                    raise error_at(f"'{st.key}' is set twice (first at line "
                                   f"{top[st.key].pos.line})", st.pos)
                top[st.key] = st
            elif isinstance(st, ast.Block):
                self._block_header(st, blocks)
                blocks[st.kind].append(self._gather(st))
        one = {k: (blocks[k][0] if blocks[k] else _Block(_empty(k), {})) for k in _SINGLE}
        dataset = self._dataset(blocks["dataset"][0] if blocks["dataset"] else None)
        camera = self._camera(one["camera"])
        light = self._light(one["light"])
        backdrop = self._backdrop(one["backdrop"])
        layout = self._layout(one["layout"])
        objects = tuple(self._object(g) for g in blocks["object"])
        classes = tuple(dict.fromkeys(o.label for o in objects))
        sweeps = tuple(lower_sweep(g.block, i, self.params, self.lower)
                       for i, g in enumerate(blocks["sweep"]))
        model_path = None
        if "model" in top:
            e = top["model"].values[0]
            name = self.lower.static(self.lower.fit(e, TOP_SETTINGS["model"], "model"))
            model_path = resolve(name, e.pos, "model file")
        model_path = model_override or model_path
        return Recipe(
            path=path, text=text, model_path=model_path, dataset=dataset, classes=classes,
            constants=tuple(self.constants), camera=camera, light=light, backdrop=backdrop,
            layout=layout, objects=objects, sweeps=sweeps, params=dict(self.params),
            program=program, files=files,
        )

    def _block_header(self, b: ast.Block, blocks: dict[str, list[_Block]]) -> None:
        if b.kind not in BLOCKS:
            raise unknown("block", b.kind, list(BLOCKS), pos=b.pos)
        schema = BLOCKS[b.kind]
        if schema.label == "none" and b.label is not None:
            raise error_at(f"a {b.kind} block takes no name, got {b.label}", b.label_pos)
        if not schema.many and blocks[b.kind]:
            first = blocks[b.kind][0].block.pos
            raise error_at(f"a second {b.kind} block (the first is at {first.where})", b.pos)
        if schema.many and b.label is not None:
            for other in blocks[b.kind]:
                if other.block.label == b.label:
                    raise error_at(f"two {b.kind} blocks are named {b.label} (the first is at "
                                   f"{other.block.pos.where})", b.label_pos)


def _empty(kind: str) -> ast.Block:
    return ast.Block(kind, None, ())
