"""Print a recipe's syntax tree back as text in one canonical layout, comments kept.

Two-space indents, one setting a line, numbers as they were written, ``, `` between list
items, at most one blank line where the source had blank lines. The output parses back to
an equal tree and checks to an equal recipe (tests/test_recipe_format.py).
"""

from __future__ import annotations

from collections import deque

from genfield.recipe import ast


def _number(q: ast.Quantity) -> str:
    if q.literal:
        return q.literal
    text = str(int(q.value)) if q.value.is_integer() and abs(q.value) < 1e15 else repr(q.value)
    return text + q.unit


def format_expr(e: ast.Expr) -> str:
    """One value or draw as recipe text."""
    if isinstance(e, ast.Quantity):
        return _number(e)
    if isinstance(e, ast.Dims):
        return f"{e.width}x{e.height}"
    if isinstance(e, ast.Colour):
        return e.hex
    if isinstance(e, ast.Text):
        return f'"{e.value}"'
    if isinstance(e, ast.Ref):
        return e.name
    if isinstance(e, ast.Boolean):
        return "yes" if e.value else "no"
    if isinstance(e, ast.Vector):
        return "(" + ", ".join(format_expr(i) for i in e.items) + ")"
    if isinstance(e, ast.Uniform):
        return f"{format_expr(e.lo)}..{format_expr(e.hi)}"
    if isinstance(e, ast.Steps):
        return f"{format_expr(e.lo)}..{format_expr(e.hi)} steps {e.count}"
    if isinstance(e, ast.WholeRange):
        return f"{format_expr(e.lo)} to {format_expr(e.hi)}"
    if isinstance(e, ast.Normal):
        text = f"normal {format_expr(e.mean)} sd {format_expr(e.sd)}"
        if e.clamp is not None:
            text += f" clamp {format_expr(e.clamp[0])}..{format_expr(e.clamp[1])}"
        return text
    if isinstance(e, ast.Pick):
        return f"pick [{_items(e.items)}]"
    if isinstance(e, ast.Prior):
        return "prior" if e.temperature is None else f"prior temperature {format_expr(e.temperature)}"
    if isinstance(e, ast.Mix):
        return f"{'slerp' if e.spherical else 'lerp'} [{_items(e.items)}]"
    if isinstance(e, ast.Shift):
        return f"{format_expr(e.base)} shift dim {e.dim} by {format_expr(e.by)}"
    if isinstance(e, ast.Wearing):
        return f"{format_expr(e.shape)} wearing {format_expr(e.appearance)}"
    raise TypeError(f"not an expression: {e!r}")


def _items(items: tuple[ast.Item, ...]) -> str:
    return ", ".join(
        format_expr(i.value) + ("" if i.weight is None else f": {format_expr(i.weight)}") for i in items
    )


def format_setting(s: ast.Setting) -> str:
    return f"{s.key} " + ", ".join(format_expr(v) for v in s.values)


def format_statement_head(st: ast.Statement) -> str:
    """The first line of a statement (a whole line for all but blocks)."""
    if isinstance(st, ast.Include):
        return f'include "{st.path}"'
    if isinstance(st, ast.Constant):
        scope = f" per {st.scope}" if st.scope else ""
        return f"{st.name} = {format_expr(st.value)}{scope}"
    if isinstance(st, ast.Setting):
        return format_setting(st)
    label = "" if st.label is None else (f' "{st.label}"' if st.quoted else f" {st.label}")
    return f"{st.kind}{label} {{"


class _Printer:
    """Emits lines, placing each comment before, or at the end of, the line it belonged to."""

    def __init__(self, comments: tuple[ast.Comment, ...]) -> None:
        self.pending = deque(sorted(comments, key=lambda c: c.line))
        self.lines: list[str] = []
        self.last = 0  # the source line of what was emitted last
        self.blank_ok = False  # False right after an opening brace

    def _emit(self, text: str, line: int) -> None:
        if self.blank_ok and self.last and line > self.last + 1:
            self.lines.append("")
        self.lines.append(text)
        self.last = max(self.last, line)
        self.blank_ok = True

    def comments_before(self, line: int, indent: str) -> None:
        while self.pending and self.pending[0].line < line:
            c = self.pending.popleft()
            self._emit(indent + c.text, c.line)

    def line(self, text: str, line: int, end_line: int, indent: str) -> None:
        self.comments_before(line, indent)
        if self.pending and self.pending[0].line == line and self.pending[0].trailing:
            text += "  " + self.pending.popleft().text
        self._emit(indent + text, line)
        self.last = max(self.last, end_line)


def format_program(program: ast.Program) -> str:
    """A whole file as canonical text (ends with one newline)."""
    p = _Printer(program.comments)
    for st in program.statements:
        if not isinstance(st, ast.Block):
            p.line(format_statement_head(st), st.pos.line, st.end_line, "")
            continue
        p.line(format_statement_head(st), st.pos.line, st.pos.line, "")
        p.blank_ok = False
        for s in st.settings:
            p.line(format_setting(s), s.pos.line, s.end_line, "  ")
        p.comments_before(st.end_line, "  ")
        p.blank_ok = False
        p.line("}", max(st.end_line, p.last), st.end_line, "")
    p.comments_before(10**9, "")
    return "\n".join(p.lines) + "\n" if p.lines else ""


def format_recipe(recipe_or_ast) -> str:
    """Canonical text of a checked Recipe's top file, or of a Program."""
    program = getattr(recipe_or_ast, "program", recipe_or_ast)
    if not isinstance(program, ast.Program):
        raise TypeError("format_recipe takes a Recipe or an ast.Program")
    return format_program(program)
