"""Read a recipe file, inline its includes, check it: ``load_recipe(path) -> Recipe``.

Every path a recipe names (includes, the model) is relative to the file that names it and
must stay inside the folder of the top recipe, the folder the user pointed at; symbolic
links are resolved before that test. Include cycles and files included twice are errors.
Nothing here imports torch.
"""

from __future__ import annotations

import os
from pathlib import Path

from genfield.errors import RecipeError
from genfield.recipe import ast
from genfield.recipe.checker import Checker
from genfield.recipe.names import error_at
from genfield.recipe.parser import parse_text
from genfield.recipe.spec import Recipe

MAX_BYTES = 1 << 20  # recipes are short; a larger file is a mistake (or not a recipe)


def _read(path: Path, where: str) -> str:
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise RecipeError(f"no recipe file {path}", where=where) from None
    except IsADirectoryError:
        raise RecipeError(f"{path} is a folder, not a recipe file", where=where) from None
    except OSError as err:
        raise RecipeError(f"cannot read {path}: {err.strerror}", where=where) from None
    if len(data) > MAX_BYTES:
        raise RecipeError(f"{path} holds {len(data)} bytes; a recipe is at most {MAX_BYTES}",
                          where=where)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as err:
        raise RecipeError(f"{path} is not UTF-8 text (byte {err.start})", where=where) from None


class _Loader:
    """Inlines includes depth-first, remembering each file's real path and display name."""

    def __init__(self, top: Path) -> None:
        self.root = top.resolve().parent
        self.real: dict[str, Path] = {}  # display name -> resolved path
        self.included: dict[Path, ast.Pos] = {}
        self.texts: list[tuple[str, str]] = []  # (display name, text), top file first

    def resolve(self, relative: str, pos: ast.Pos, what: str) -> Path:
        """The file a path in a recipe names; refused when it leaves the recipe's folder."""
        if not relative:
            raise error_at(f"the {what}'s path is empty", pos)
        if "\0" in relative:
            raise error_at(f"the {what}'s path holds a NUL character", pos)
        if os.path.isabs(relative) or relative.startswith("~"):
            raise error_at(f"the {what} {relative} must be a path relative to the recipe",
                           pos, hint="recipes name files inside their own folder")
        base = self.real[pos.file].parent
        target = (base / relative).resolve()
        if not target.is_relative_to(self.root):
            raise error_at(f"the {what} {relative} is outside the recipe's folder {self.root}",
                           pos, hint="keep included recipes and the model inside that folder")
        return target

    def expand(self, display: str, real: Path, text: str,
               chain: tuple[Path, ...]) -> tuple[ast.Program, list[ast.Statement]]:
        """The file's own tree and its statements with every include inlined."""
        self.real[display] = real
        self.texts.append((display, text))
        program = parse_text(text, display)
        out: list[ast.Statement] = []
        for st in program.statements:
            if not isinstance(st, ast.Include):
                out.append(st)
                continue
            target = self.resolve(st.path, st.pos, "included recipe")
            if target in chain or target == real:
                loop = [p.name for p in (*chain, real, target)]
                raise error_at(f"include cycle: {' -> '.join(loop)}", st.pos)
            if target in self.included:
                raise error_at(f"{st.path} is already included (at {self.included[target].where})",
                               st.pos)
            self.included[target] = st.pos
            name = os.path.normpath(os.path.join(os.path.dirname(display), st.path))
            out.extend(self.expand(name, target, _read(target, st.pos.where), (*chain, real))[1])
        return program, out


def loads(text: str, *, path: str | os.PathLike = "recipe.gfr",
          model: str | os.PathLike | None = None) -> Recipe:
    """Check recipe text as if it were the file ``path`` (its includes are read from disk)."""
    path = Path(path)
    loader = _Loader(path)
    program, statements = loader.expand(str(path), path.resolve(), text, ())
    joined = "\n".join(
        t if i == 0 else f"# ---- included: {name} ----\n{t}"
        for i, (name, t) in enumerate(loader.texts)
    )
    return Checker(statements).check(
        path=path, text=joined, program=program,
        files=tuple(loader.real[name] for name, _ in loader.texts),
        model_override=Path(model).resolve() if model is not None else None,
        resolve=loader.resolve,
    )


def load_recipe(path: str | os.PathLike, *, model: str | os.PathLike | None = None) -> Recipe:
    """Parse a recipe file, inline its includes and check it.

    Args:
        path: the recipe (``.gfr``).
        model: a model file to use instead of the one the recipe names (not checked for
            existence here: the renderer reads it).
    Raises:
        RecipeError: with ``file:line:column`` for anything wrong in the recipe or its includes.
    """
    path = Path(path)
    return loads(_read(path, str(path)), path=path, model=model)
