"""Recipe text to a syntax tree (``genfield.recipe.ast``), with every error a RecipeError.

One LALR parser with lark's basic lexer, built once per process from
``grammar/recipe.lark``. The lark tree is lowered at once into typed dataclass nodes
carrying file, line and column; lark's exceptions are turned into RecipeErrors in one place
(``genfield.recipe.syntax``), and a RecipeError raised while lowering keeps its position
(lark's ``VisitError`` is unwrapped).
"""

from __future__ import annotations

import contextvars
import functools
import math
import re

from lark import Lark, Token, Transformer, Tree, v_args
from lark.exceptions import UnexpectedInput, VisitError

from genfield.errors import RecipeError
from genfield.paths import grammar_file
from genfield.recipe import ast

MAX_DEPTH = 48  # nesting of a parse tree; real recipes stay under 15
MAX_NUMBER = 1e12  # larger numbers are mistakes, and their sums and spans stay finite
_NUMBER = re.compile(r"(-?[0-9]+(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?)(mm|cm|m|deg|rad|px)?")
_COMMENT = re.compile(r"#([ \t#][^\n]*)?")
# Comments are carried by the line-end token; the lexer hands each one to this list.
_line_ends: contextvars.ContextVar[list[Token] | None] = contextvars.ContextVar(
    "recipe_line_ends", default=None
)


def _collect_line_end(token: Token) -> Token:
    sink = _line_ends.get()
    if sink is not None:
        sink.append(token)
    return token


@functools.lru_cache(maxsize=1)
def lark_parser() -> Lark:
    """The one parser (LALR, basic lexer), built on first use."""
    return Lark(
        grammar_file("recipe.lark").read_text(encoding="utf-8"),
        parser="lalr",
        lexer="basic",
        propagate_positions=True,
        maybe_placeholders=True,
        lexer_callbacks={"_NL": _collect_line_end},
    )


def normalise(text: str) -> str:
    """Line ends to ``\\n`` and no byte-order mark, so columns count what a person sees."""
    return text.lstrip("\ufeff").replace("\r\n", "\n").replace("\r", "\n")


def parse_text(text: str, file: str = "<recipe>") -> ast.Program:
    """Parse one recipe file's text into a Program; raises RecipeError on any syntax error."""
    from genfield.recipe.syntax import syntax_error

    text = normalise(text)
    lines = text.split("\n")
    sink: list[Token] = []
    reset = _line_ends.set(sink)
    try:
        tree = lark_parser().parse(text + "\n")
    except UnexpectedInput as err:
        raise syntax_error(err, text, file) from None
    finally:
        _line_ends.reset(reset)
    _check_depth(tree, file, lines)
    try:
        statements = _Lower(file, lines).transform(tree)
    except VisitError as err:
        if isinstance(err.orig_exc, RecipeError):
            raise err.orig_exc from None
        raise
    return ast.Program(file, tuple(statements), _comments(sink, lines))


def _check_depth(tree: Tree, file: str, lines: list[str]) -> None:
    """Refuse values nested deeper than MAX_DEPTH, so that every later step (which walks
    the tree recursively) stays far inside Python's recursion limit."""
    stack = [(tree, 1)]
    while stack:
        node, depth = stack.pop()
        if depth > MAX_DEPTH:
            line, column = node.meta.line, node.meta.column
            text = lines[line - 1] if 0 < line <= len(lines) else ""
            pos = ast.Pos(file, line, column, text)
            raise RecipeError(f"this value is nested more than {MAX_DEPTH} deep", where=pos.where,
                              context=pos.context(), hint="write it out more simply")
        stack.extend((child, depth + 1) for child in node.children if isinstance(child, Tree))


def _comments(tokens: list[Token], lines: list[str]) -> tuple[ast.Comment, ...]:
    """Every comment in the line-end tokens, with its line and whether code precedes it."""
    out = []
    for tok in tokens:
        line = tok.line
        for k, segment in enumerate(str(tok).split("\n")):
            stripped = segment.lstrip(" \t")
            match = _COMMENT.match(stripped)
            if match and match.group(0):
                n = line + k
                before = lines[n - 1][: len(lines[n - 1]) - len(stripped)] if n <= len(lines) else ""
                out.append(ast.Comment(n, match.group(0).rstrip(), bool(before.strip())))
    return tuple(out)


class _Lower(Transformer):
    """lark Tree -> ast nodes; every node gets a Pos from lark's meta or its first token."""

    def __init__(self, file: str, lines: list[str]) -> None:
        super().__init__(visit_tokens=False)
        self.file = file
        self.lines = lines

    def _pos(self, line: int, column: int) -> ast.Pos:
        text = self.lines[line - 1] if 0 < line <= len(self.lines) else ""
        return ast.Pos(self.file, line, column, text)

    def _at(self, meta) -> ast.Pos:
        return self._pos(meta.line, meta.column)

    def _tok(self, tok: Token) -> ast.Pos:
        return self._pos(tok.line, tok.column)

    def _error(self, message: str, pos: ast.Pos, hint: str | None = None) -> RecipeError:
        return RecipeError(message, where=pos.where, hint=hint, context=pos.context())

    def _whole(self, tok: Token, what: str) -> int:
        if not str(tok).lstrip("-").isdigit():
            raise self._error(f"{what} must be a whole number, got {tok}", self._tok(tok))
        return int(str(tok))

    # ---- statements ----

    def start(self, children):
        return children

    @v_args(meta=True)
    def include(self, meta, children):
        (path,) = children
        return ast.Include(str(path)[1:-1], pos=self._at(meta), end_line=meta.end_line)

    @v_args(meta=True)
    def constant(self, meta, children):
        key, value, scope = children
        name, pos = key
        if "." in name:
            raise self._error(f"a constant's name cannot contain '.', got {name}", pos,
                              hint="dotted names are parameters, used as keys in sweep blocks")
        scope_name, scope_pos = scope if scope is not None else (None, ast.NOWHERE)
        return ast.Constant(name, value, scope_name, pos=pos, scope_pos=scope_pos,
                            end_line=meta.end_line)

    def scope(self, children):
        (tok,) = children
        return str(tok), self._tok(tok)

    @v_args(meta=True)
    def block(self, meta, children):
        key, label, *rest = children
        settings = [s for s in rest if s is not None]
        kind, pos = key
        if "." in kind:
            raise self._error(f"a block's kind is one word, got {kind}", pos)
        text, quoted, label_pos = label if label is not None else (None, False, ast.NOWHERE)
        return ast.Block(kind, text, tuple(settings), quoted, pos=pos, label_pos=label_pos,
                         end_line=meta.end_line)

    def label(self, children):
        (tok,) = children
        quoted = tok.type == "STRING"
        return (str(tok)[1:-1] if quoted else str(tok)), quoted, self._tok(tok)

    @v_args(meta=True)
    def setting(self, meta, children):
        (key, pos), *values = children
        return ast.Setting(key, tuple(values), pos=pos, end_line=meta.end_line)

    def key(self, children):
        (tok,) = children
        return str(tok), self._tok(tok)

    # ---- expressions ----

    @v_args(meta=True)
    def wearing(self, meta, children):
        return ast.Wearing(children[0], children[1], pos=self._at(meta))

    @v_args(meta=True)
    def shift(self, meta, children):
        base, dim, by = children
        return ast.Shift(base, self._whole(dim, "a code dimension"), by, pos=self._at(meta))

    @v_args(meta=True)
    def uniform(self, meta, children):
        return ast.Uniform(children[0], children[1], pos=self._at(meta))

    @v_args(meta=True)
    def steps(self, meta, children):
        lo, hi, count = children
        return ast.Steps(lo, hi, self._whole(count, "the number of steps"), pos=self._at(meta))

    @v_args(meta=True)
    def whole_range(self, meta, children):
        return ast.WholeRange(children[0], children[1], pos=self._at(meta))

    @v_args(meta=True)
    def normal(self, meta, children):
        mean, sd, clamp = children
        return ast.Normal(mean, sd, clamp, pos=self._at(meta))

    def clamp(self, children):
        return children[0], children[1]

    def temperature(self, children):
        return children[0]

    @v_args(meta=True)
    def pick(self, meta, children):
        return ast.Pick(tuple(children), pos=self._at(meta))

    @v_args(meta=True)
    def prior(self, meta, children):
        return ast.Prior(children[0], pos=self._at(meta))

    @v_args(meta=True)
    def lerp(self, meta, children):
        return ast.Mix(tuple(children), spherical=False, pos=self._at(meta))

    @v_args(meta=True)
    def slerp(self, meta, children):
        return ast.Mix(tuple(children), spherical=True, pos=self._at(meta))

    @v_args(meta=True)
    def item(self, meta, children):
        return ast.Item(children[0], children[1], pos=self._at(meta))

    @v_args(meta=True)
    def vector(self, meta, children):
        return ast.Vector(tuple(children), pos=self._at(meta))

    def dims(self, children):
        (tok,) = children
        width, height = (int(v) for v in str(tok).split("x"))
        return ast.Dims(width, height, pos=self._tok(tok))

    def colour(self, children):
        (tok,) = children
        return ast.Colour(str(tok).lower(), pos=self._tok(tok))

    def text(self, children):
        (tok,) = children
        return ast.Text(str(tok)[1:-1], pos=self._tok(tok))

    def ref(self, children):
        (tok,) = children
        return ast.Ref(str(tok), pos=self._tok(tok))

    def boolean(self, children):
        (tok,) = children
        return ast.Boolean(str(tok) == "yes", pos=self._tok(tok))

    def quantity(self, children):
        (tok,) = children
        match = _NUMBER.fullmatch(str(tok))  # the same pattern as the grammar's NUMBER
        value = float(match.group(1))
        if not math.isfinite(value) or abs(value) > MAX_NUMBER:
            raise self._error(f"the number {tok} is too large", self._tok(tok),
                              hint=f"numbers in a recipe stay within +-{MAX_NUMBER:g}")
        return ast.Quantity(value, match.group(2) or "", literal=str(tok), pos=self._tok(tok))
