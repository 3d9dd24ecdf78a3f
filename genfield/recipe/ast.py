"""The recipe's syntax tree: typed dataclass nodes that carry their place in the text.

The parser lowers lark's tree straight into these nodes; nothing past the parser sees a lark
``Tree``. Positions never take part in equality (``compare=False``), so two recipes that say
the same thing in different layouts have equal trees: the formatter's round trip relies on it.
Numbers are kept as written (value and unit); the checker converts them to metres and radians.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class Pos:
    """A place in a recipe file: 1-based line and column, and the text of that line."""

    file: str
    line: int
    column: int
    text: str = ""  # the whole source line, for the caret under an error

    @property
    def where(self) -> str:
        return f"{self.file}:{self.line}:{self.column}"

    def context(self) -> str:
        """The offending line and a caret under the column (tabs kept so the caret lines up)."""
        lead = "".join(c if c == "\t" else " " for c in self.text[: self.column - 1])
        return f"  {self.text}\n  {lead}^"


NOWHERE = Pos("<recipe>", 1, 1, "")


def _pos() -> Pos:
    return field(default=NOWHERE, compare=False, repr=False)  # type: ignore[return-value]


# ---- values and draws ---------------------------------------------------------------------


@dataclass(frozen=True)
class Quantity:
    """A number and its unit as written: ``3cm`` is (3.0, "cm"); a plain number has unit ""."""

    value: float
    unit: str
    literal: str = field(default="", compare=False)  # the spelling, kept by the formatter
    pos: Pos = _pos()

    @property
    def whole(self) -> bool:
        """True for a whole number written without a unit, decimal point or exponent."""
        digits = self.literal.lstrip("-")
        return self.unit == "" and digits.isdigit()


@dataclass(frozen=True)
class Dims:
    """An image size ``160x120``."""

    width: int
    height: int
    pos: Pos = _pos()


@dataclass(frozen=True)
class Colour:
    """``#rrggbb``, kept as written (lower case)."""

    hex: str
    pos: Pos = _pos()


@dataclass(frozen=True)
class Text:
    """A quoted text: a code name, a label, a path."""

    value: str
    pos: Pos = _pos()


@dataclass(frozen=True)
class Ref:
    """A bare name: a named constant, or a word such as ``floor`` or ``grid``."""

    name: str
    pos: Pos = _pos()


@dataclass(frozen=True)
class Boolean:
    value: bool
    pos: Pos = _pos()


@dataclass(frozen=True)
class Vector:
    """``(a, b, ...)``: two or more parts."""

    items: tuple[Expr, ...]
    pos: Pos = _pos()


@dataclass(frozen=True)
class Uniform:
    """``lo..hi``: uniform between two numbers, or in the box between two vectors."""

    lo: Expr
    hi: Expr
    pos: Pos = _pos()


@dataclass(frozen=True)
class Steps:
    """``lo..hi steps n``: n evenly spaced values from lo to hi, both included (sweeps)."""

    lo: Expr
    hi: Expr
    count: int
    pos: Pos = _pos()


@dataclass(frozen=True)
class WholeRange:
    """``lo to hi``: a whole number from lo to hi, both included, equally likely."""

    lo: Expr
    hi: Expr
    pos: Pos = _pos()


@dataclass(frozen=True)
class Normal:
    """``normal mean sd spread [clamp lo..hi]``."""

    mean: Expr
    sd: Expr
    clamp: tuple[Expr, Expr] | None = None
    pos: Pos = _pos()


@dataclass(frozen=True)
class Item:
    """One entry of a ``pick``, ``lerp`` or ``slerp`` list: a value and an optional weight."""

    value: Expr
    weight: Expr | None = None
    pos: Pos = _pos()


@dataclass(frozen=True)
class Pick:
    """``pick [a: w, b, ...]``: one of the values, chosen with the weights (1 where omitted)."""

    items: tuple[Item, ...]
    pos: Pos = _pos()


@dataclass(frozen=True)
class Prior:
    """``prior [temperature t]``: a draw from the model's prior over codes."""

    temperature: Expr | None = None
    pos: Pos = _pos()


@dataclass(frozen=True)
class Mix:
    """``lerp [...]`` (linear) or ``slerp [...]`` (spherical) over named codes with weights."""

    items: tuple[Item, ...]
    spherical: bool
    pos: Pos = _pos()


@dataclass(frozen=True)
class Shift:
    """``base shift dim k by v``: a code moved by v along its dimension k (0-based)."""

    base: Expr
    dim: int
    by: Expr
    pos: Pos = _pos()


@dataclass(frozen=True)
class Wearing:
    """``shape wearing appearance``: the shape of one code with the appearance of another."""

    shape: Expr
    appearance: Expr
    pos: Pos = _pos()


Expr = (
    Quantity | Dims | Colour | Text | Ref | Boolean | Vector | Uniform | Steps | WholeRange
    | Normal | Pick | Prior | Mix | Shift | Wearing
)


# ---- statements ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Include:
    path: str
    pos: Pos = _pos()
    end_line: int = field(default=0, compare=False)


@dataclass(frozen=True)
class Constant:
    """``name = value [per object|per image]``."""

    name: str
    value: Expr
    scope: str | None = None  # "object", "image" or None (per image)
    pos: Pos = _pos()
    scope_pos: Pos = _pos()
    end_line: int = field(default=0, compare=False)


@dataclass(frozen=True)
class Setting:
    """``key value[, value...]``; a dotted key (``camera.azimuth``) names a parameter."""

    key: str
    values: tuple[Expr, ...]
    pos: Pos = _pos()
    end_line: int = field(default=0, compare=False)


@dataclass(frozen=True)
class Block:
    """``kind [label] { settings }``."""

    kind: str
    label: str | None
    settings: tuple[Setting, ...]
    quoted: bool = False  # the label was written as "text"
    pos: Pos = _pos()
    label_pos: Pos = _pos()
    end_line: int = field(default=0, compare=False)  # the line of the closing brace


Statement = Include | Constant | Setting | Block


@dataclass(frozen=True)
class Comment:
    """A comment, kept for the formatter: ``trailing`` when it follows code on its line."""

    line: int
    text: str  # starting with "#"
    trailing: bool


@dataclass(frozen=True)
class Program:
    """One recipe file: its statements in order, and its comments."""

    file: str
    statements: tuple[Statement, ...]
    comments: tuple[Comment, ...] = field(default=(), compare=False)
