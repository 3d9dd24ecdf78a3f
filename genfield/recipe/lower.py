"""Type-check one expression and lower it to a value node in canonical units.

``Lowering.infer`` gives an expression its type (a number of some kind, a vector, a box, a
colour, a text, a code...) and its value node; ``Lowering.fit`` checks that type against
the slot a setting offers (schema.Slot) and the slot's bounds, reporting each problem at
the expression's position. Units: lengths become metres, angles radians; a bare ``0``
fits any kind of number.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from genfield.colour import parse_hex
from genfield.recipe import ast
from genfield.recipe import values as v
from genfield.recipe.formatter import format_expr
from genfield.recipe.names import error_at, nearest
from genfield.recipe.schema import Bound, Slot
from genfield.seeds import rng


@dataclass(frozen=True)
class Type:
    kind: str  # number, vector, box, colour, text, code, bool, dims
    unit: str | None = None  # number/vector/box: length, angle, pixels, plain; None: a bare 0
    size: int = 0  # vector/box parts
    whole: bool = False  # a whole number (or a whole range)


@dataclass(frozen=True)
class Typed:
    type: Type
    node: object


@dataclass(frozen=True)
class Known:
    """A named constant as later expressions see it."""

    type: Type
    span: tuple[float, float] | None  # support, for numbers
    random: bool
    per_object: bool
    pos: ast.Pos


def _unify(a: str | None, b: str | None, pos: ast.Pos, what: str) -> str | None:
    if a is None or b is None or a == b:
        return a if b is None else b
    raise error_at(f"{what} mixes {v.KIND_SHORT[a]} and {v.KIND_SHORT[b]}", pos)


class _FixedConstants(dict):
    """The values of constants that cannot vary, worked out when first read."""

    def __init__(self, lowering: Lowering) -> None:
        super().__init__()
        self.lowering = lowering

    def __missing__(self, name: str) -> object:
        value = self.lowering.static(self.lowering.nodes[name])
        self[name] = value
        return value


class Lowering:
    """Expressions to value nodes, given the constants defined so far."""

    def __init__(self, constants: dict[str, Known], later: dict[str, ast.Pos],
                 nodes: dict[str, object] | None = None) -> None:
        self.constants = constants  # defined so far, in order
        self.later = later  # every constant of the recipe, for "used before defined"
        self.nodes = {} if nodes is None else nodes  # their value nodes

    def static(self, node: object) -> object:
        """The one value a node that cannot vary takes (a setting that must be fixed)."""
        return v.draw(node, v.Context(rng(0, 0, "fixed value"), _FixedConstants(self), {}))

    # ---- inference ----

    def infer(self, e: ast.Expr) -> Typed:
        if isinstance(e, ast.Quantity):
            kind, factor = v.UNITS[e.unit]
            unit = None if (e.value == 0 and e.unit == "") else kind
            return Typed(Type("number", unit, whole=e.whole), v.Fixed(e.value * factor))
        if isinstance(e, ast.Dims):
            return Typed(Type("dims"), v.Fixed((e.width, e.height)))
        if isinstance(e, ast.Colour):
            return Typed(Type("colour"), v.Fixed(parse_hex(e.hex)))
        if isinstance(e, ast.Text):
            return Typed(Type("text"), v.Fixed(e.value))
        if isinstance(e, ast.Boolean):
            return Typed(Type("bool"), v.Fixed(e.value))
        if isinstance(e, ast.Ref):
            return self._ref(e)
        if isinstance(e, ast.Vector):
            return self._vector(e)
        if isinstance(e, ast.Uniform):
            return self._uniform(e)
        if isinstance(e, ast.WholeRange):
            lo, hi = (self._literal_number(x, "a whole-number range") for x in (e.lo, e.hi))
            for x, t in ((e.lo, lo), (e.hi, hi)):
                if not t.type.whole:
                    raise error_at(f"a range 'a to b' takes whole numbers, got {format_expr(x)}",
                                   x.pos, hint="for a range of any numbers write a..b")
            a, b = int(lo.node.value), int(hi.node.value)  # type: ignore[attr-defined]
            if a > b:
                raise error_at(f"the range {format_expr(e)} is empty: {a} is above {b}", e.pos)
            return Typed(Type("number", "plain", whole=True), v.Whole(a, b))
        if isinstance(e, ast.Normal):
            return self._normal(e)
        if isinstance(e, ast.Pick):
            return self._pick(e)
        if isinstance(e, ast.Prior):
            t = v.Fixed(1.0) if e.temperature is None else self.fit_number(
                e.temperature, "plain", "a temperature", Bound(0.0, text=">= 0"))
            text = "1 (default)" if e.temperature is None else format_expr(e.temperature)
            return Typed(Type("code"), v.PriorCode(t, pos=e.pos, text=text))
        if isinstance(e, ast.Mix):
            return self._mix(e)
        if isinstance(e, ast.Shift):
            base = self.as_code(self.infer(e.base), e.base)
            by = self.fit_number(e.by, "plain", "a shift")
            if e.dim < 0:
                raise error_at(f"code dimensions count from 0, got {e.dim}", e.pos)
            return Typed(Type("code"), v.ShiftCode(base, e.dim, by, pos=e.pos,
                                                   text=format_expr(e.by)))
        if isinstance(e, ast.Steps):
            raise error_at("'steps' makes a series of values for a sweep block", e.pos,
                           hint="for a random value write a..b")
        if isinstance(e, ast.Wearing):
            raise error_at("'wearing' belongs in an object's asset setting", e.pos,
                           hint='asset "cup-0001" wearing "bowl-0002"')
        raise TypeError(f"not an expression: {e!r}")

    def _ref(self, e: ast.Ref) -> Typed:
        known = self.constants.get(e.name)
        if known is not None:
            return Typed(known.type, v.ConstantRef(e.name))
        if e.name in self.later:
            at = self.later[e.name]
            raise error_at(f"'{e.name}' is used before its definition at line {at.line}", e.pos,
                           hint="define constants above their first use")
        near = nearest(e.name, list(self.constants))
        hint = f"did you mean '{near}'?" if near else "define it first: NAME = VALUE"
        raise error_at(f"unknown name '{e.name}'", e.pos, hint=hint)

    def _literal(self, e: ast.Expr, what: str) -> Typed:
        """A value written out (no names, no draws): the ends of ranges and spreads."""
        typed = self.infer(e) if isinstance(e, (ast.Quantity, ast.Vector, ast.Colour)) else None
        if typed is None or not isinstance(typed.node, v.Fixed):
            raise error_at(f"{what} takes numbers written out, got {format_expr(e)}", e.pos)
        return typed

    def _literal_number(self, e: ast.Expr, what: str) -> Typed:
        typed = self._literal(e, what)
        if typed.type.kind != "number":
            raise error_at(f"{what} takes numbers, got {format_expr(e)}", e.pos)
        return typed

    def _vector(self, e: ast.Vector) -> Typed:
        parts = [self.infer(i) for i in e.items]
        unit = None
        for item, part in zip(e.items, parts, strict=True):
            if part.type.kind != "number":
                raise error_at(f"a vector's parts are numbers, got {format_expr(item)}", item.pos)
            unit = _unify(unit, part.type.unit, item.pos, "this vector")
        t = Type("vector", unit, size=len(parts), whole=all(p.type.whole for p in parts))
        if all(isinstance(p.node, v.Fixed) for p in parts):
            return Typed(t, v.Fixed(tuple(p.node.value for p in parts)))  # type: ignore[attr-defined]
        return Typed(t, v.Tuple(tuple(p.node for p in parts)))

    def _uniform(self, e: ast.Uniform) -> Typed:
        lo, hi = self._literal(e.lo, "a range"), self._literal(e.hi, "a range")
        if lo.type.kind != hi.type.kind or lo.type.size != hi.type.size:
            raise error_at(f"the ends of {format_expr(e)} are not alike", e.pos)
        if lo.type.kind == "colour":
            return Typed(Type("colour"), v.Blend(lo.node.value, hi.node.value))  # type: ignore[attr-defined]
        unit = _unify(lo.type.unit, hi.type.unit, e.pos, "this range")
        a, b = lo.node.value, hi.node.value  # type: ignore[attr-defined]
        if lo.type.kind == "number":
            if a > b:
                raise error_at(f"the range {format_expr(e)} is empty: its first end is above "
                               "its second", e.pos, hint="write the smaller end first")
            return Typed(Type("number", unit), v.Uniform(a, b))
        for axis, (x, y) in enumerate(zip(a, b, strict=True)):
            if x > y:
                raise error_at(f"the box {format_expr(e)} is empty along {v.AXES[axis]}: its "
                               "first corner is above its second", e.pos)
        return Typed(Type("box", unit, size=lo.type.size), v.Box(a, b))

    def _normal(self, e: ast.Normal) -> Typed:
        mean, sd = self._literal_number(e.mean, "normal"), self._literal_number(e.sd, "normal")
        unit = _unify(mean.type.unit, sd.type.unit, e.pos, "this normal")
        s = sd.node.value  # type: ignore[attr-defined]
        if s < 0:
            raise error_at(f"a spread (sd) must be >= 0, got {format_expr(e.sd)}", e.sd.pos)
        lo = hi = None
        if e.clamp is not None:
            a, b = (self._literal_number(x, "clamp") for x in e.clamp)
            unit = _unify(_unify(unit, a.type.unit, e.pos, "this normal"), b.type.unit, e.pos,
                          "this normal")
            lo, hi = a.node.value, b.node.value  # type: ignore[attr-defined]
            if lo > hi:
                raise error_at("the clamp range is empty: its first end is above its second",
                               e.clamp[0].pos)
        return Typed(Type("number", unit), v.Normal(mean.node.value, s, lo, hi))  # type: ignore[attr-defined]

    def _weights(self, items: tuple[ast.Item, ...], what: str) -> list[float]:
        weights = []
        for item in items:
            if item.weight is None:
                weights.append(1.0)
                continue
            w = self._literal_number(item.weight, f"a {what} weight")
            if w.type.unit not in (None, "plain") or w.node.value < 0:  # type: ignore[attr-defined]
                raise error_at(f"a {what} weight is a plain number >= 0, got "
                               f"{format_expr(item.weight)}", item.weight.pos)
            weights.append(float(w.node.value))  # type: ignore[attr-defined]
        return weights

    def _pick(self, e: ast.Pick) -> Typed:
        weights = self._weights(e.items, "pick")
        total = sum(weights)
        if total <= 0:
            raise error_at("a pick needs at least one weight above 0", e.pos)
        options = [self.infer(item.value) for item in e.items]
        kinds = {o.type.kind for o in options}
        if kinds <= {"text", "code"} and "code" in kinds:
            nodes = tuple(self.as_code(o, i.value) for o, i in zip(options, e.items, strict=True))
            return Typed(Type("code"), v.Pick(nodes, tuple(w / total for w in weights)))
        first = options[0].type
        unit = first.unit
        for item, o in zip(e.items, options, strict=True):
            if o.type.kind != first.kind or o.type.size != first.size:
                raise error_at(f"the options of a pick must be alike: {format_expr(item.value)} "
                               f"is not like {format_expr(e.items[0].value)}", item.value.pos)
            unit = _unify(unit, o.type.unit, item.value.pos, "this pick")
        t = Type(first.kind, unit, first.size, all(o.type.whole for o in options))
        return Typed(t, v.Pick(tuple(o.node for o in options), tuple(w / total for w in weights)))

    def _mix(self, e: ast.Mix) -> Typed:
        word = "slerp" if e.spherical else "lerp"
        if len(e.items) < 2:
            raise error_at(f"{word} blends two or more named codes", e.pos)
        names = []
        for item in e.items:
            if not isinstance(item.value, ast.Text):
                raise error_at(f"{word} blends named codes like \"cup-0001\", got "
                               f"{format_expr(item.value)}", item.value.pos)
            if item.value.value in names:
                raise error_at(f"'{item.value.value}' appears twice in this {word}", item.value.pos)
            names.append(item.value.value)
        weights = tuple(
            v.Fixed(1.0) if item.weight is None
            else self.fit_number(item.weight, "plain", f"a {word} weight", Bound(0.0, text=">= 0"))
            for item in e.items
        )
        texts = tuple("1 (default)" if i.weight is None else format_expr(i.weight) for i in e.items)
        return Typed(Type("code"), v.MixCode(tuple(names), weights, e.spherical, pos=e.pos,
                                             name_pos=tuple(i.value.pos for i in e.items),
                                             texts=texts))

    # ---- fitting to a slot ----

    def as_code(self, typed: Typed, e: ast.Expr) -> object:
        """A text (a code's name), a code expression or a plain vector, as a code node."""
        if typed.type.kind == "text":
            if isinstance(e, ast.Pick) and isinstance(typed.node, v.Pick):
                # one named node per option, so that an unknown name is shown where it is
                options = tuple(v.NamedCode(o, pos=i.value.pos)
                                for o, i in zip(typed.node.options, e.items, strict=True))
                return v.Pick(options, typed.node.probabilities)
            return v.NamedCode(typed.node, pos=e.pos)
        if typed.type.kind == "code":
            return typed.node
        if typed.type.kind == "vector" and typed.type.unit in (None, "plain"):
            return v.VectorCode(typed.node, typed.type.size, pos=e.pos)
        raise error_at(f"expected a code (a name like \"cup-0001\", prior, lerp, slerp or a "
                       f"vector), got {format_expr(e)}", e.pos)

    def span(self, node: object) -> tuple[float, float]:
        spans = {n: k.span for n, k in self.constants.items() if k.span is not None}
        return v.support(node, spans)

    def random(self, node: object) -> bool:
        return v.is_random(node, {n for n, k in self.constants.items() if k.random})

    def fit_number(self, e: ast.Expr, unit: str, what: str, bound: Bound | None = None,
                   whole: bool = False, fixed: bool = False) -> object:
        typed = self.infer(e)
        text = format_expr(e)
        if typed.type.kind != "number":
            raise error_at(f"{what} needs {v.KIND_WORDS[unit]}, got {text}", e.pos)
        got = typed.type.unit
        if got is not None and got != unit:
            if got == "plain":
                raise error_at(f"{what} needs {v.KIND_WORDS[unit]}: {text} has no unit", e.pos,
                               hint=f"write it with its unit, like {v.KIND_EXAMPLES[unit]}")
            raise error_at(f"{what} needs {v.KIND_WORDS[unit]}; {text} is {v.KIND_SHORT[got]}",
                           e.pos)
        if whole and not typed.type.whole:
            hint = "for a range of whole numbers write 2 to 5" if isinstance(e, ast.Uniform) else None
            raise error_at(f"{what} must be a whole number, got {text}", e.pos, hint=hint)
        if fixed and self.random(typed.node):
            raise error_at(f"{what} must be a fixed value, not drawn; got {text}", e.pos)
        if bound is not None:
            lo, hi = self.span(typed.node)
            for end in (lo, hi):
                if not bound.holds(end):
                    if lo == hi:
                        raise error_at(f"{what} must be {bound.text}, got {text}", e.pos)
                    shown = "any value" if math.isinf(end) else v.show(end, unit)
                    raise error_at(f"{what} must be {bound.text}, but {text} can give {shown}",
                                   e.pos, hint="narrow the range, or clamp the normal")
        return typed.node

    def fit(self, e: ast.Expr, slot: Slot, what: str) -> object:
        """The value node for ``e`` in a setting that takes ``slot``."""
        if slot.type in ("number", "whole"):
            return self.fit_number(e, slot.unit, what, slot.bound, slot.type == "whole", slot.fixed)
        if slot.type == "words":
            if not isinstance(e, ast.Ref) or e.name not in slot.words:
                got = e.name if isinstance(e, ast.Ref) else format_expr(e)
                near = nearest(got, list(slot.words))
                hint = f"did you mean '{near}'?" if near else f"one of: {', '.join(slot.words)}"
                raise error_at(f"{what} takes one of {', '.join(slot.words)}, got {got}", e.pos,
                               hint=hint)
            return v.Fixed(e.name)
        if slot.type == "bool" and isinstance(e, ast.Ref) and e.name not in self.constants:
            raise error_at(f"{what} needs yes or no, got {e.name}", e.pos)
        typed = self.infer(e)
        t, text = typed.type, format_expr(e)
        if slot.type in ("code", "asset"):
            return self.as_code(typed, e)
        if slot.type in ("vector", "box"):
            kinds = ("vector", "box") if slot.type == "vector" else ("box",)
            if t.kind not in kinds:
                want = "a vector like (1cm, 2cm, 0)" if slot.type == "vector" else \
                    "a box like (-10cm, -10cm)..(10cm, 10cm)"
                raise error_at(f"{what} needs {want}, got {text}", e.pos)
            if t.size not in slot.sizes:
                sizes = " or ".join(str(s) for s in slot.sizes)
                raise error_at(f"{what} needs {sizes} parts, got {t.size}", e.pos)
            if t.unit is not None and t.unit != slot.unit:
                if t.unit == "plain":
                    raise error_at(f"{what} needs {v.KIND_WORDS[slot.unit]}: {text} has no unit",
                                   e.pos, hint=f"write its parts with units, like "
                                   f"{v.KIND_EXAMPLES[slot.unit]}")
                raise error_at(f"{what} needs {v.KIND_WORDS[slot.unit]}; {text} is "
                               f"{v.KIND_SHORT[t.unit]}", e.pos)
            return typed.node
        expected = {"colour": "a colour like #a1b2c3", "text": 'a text in quotes',
                    "bool": "yes or no", "dims": "an image size like 160x120"}[slot.type]
        if t.kind != slot.type:
            raise error_at(f"{what} needs {expected}, got {text}", e.pos)
        if slot.fixed and self.random(typed.node):
            raise error_at(f"{what} must be a fixed value, not drawn; got {text}", e.pos)
        return typed.node
