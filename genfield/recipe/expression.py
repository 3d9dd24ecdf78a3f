"""One code expression on its own, as a command line gives it (``genfield mesh --shape``).

The text is read exactly as the value of a recipe setting ``shape EXPR``: same parser, same
type checks, same resolution against the model's CodeBook (``genfield.recipe.codes``), so a
named code, ``prior [temperature t]``, ``lerp [...]``, ``slerp [...]``, ``shift`` and explicit
vectors all work and fail as they do in a recipe. Errors name the option as the file:
``--shape:1:7: the model has no code named 'cupp-0001'``.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from genfield.field.codebook import CodeBook
from genfield.recipe import ast
from genfield.recipe import values as v
from genfield.recipe.codes import SPACES, resolve
from genfield.recipe.lower import Lowering
from genfield.recipe.names import error_at
from genfield.recipe.parser import parse_text


def resolve_code_text(text: str, space: str, codebook: CodeBook, rng: np.random.Generator, *,
                      key: str = "shape", source: str = "--shape") -> tuple[np.ndarray, dict[str, Any]]:
    """The vector (float64, the space's length) and JSON-able description of one expression.

    Args:
        text: the expression, e.g. ``"cup-0003"`` (quoted), ``prior temperature 0.8``.
        space: "shape", "appearance" or "joint" (both, shape first).
        codebook: the model's codes and prior.
        rng: the stream prior draws take their numbers from.
        key: the setting word the text is read after (shown in error context).
        source: what errors call the file (the command-line option).
    """
    if space not in SPACES:
        raise ValueError(f"space must be one of {SPACES}, got {space!r}")
    program = parse_text(f"{key} {text}", source)
    statements = program.statements
    if len(statements) != 1 or not isinstance(statements[0], ast.Setting) \
            or len(statements[0].values) != 1:
        pos = statements[-1].pos if statements else ast.Pos(source, 1, 1, f"{key} {text}")
        raise error_at("expected one code expression", pos,
                       hint='e.g. "cup-0003", prior temperature 0.8, lerp ["a": 1, "b": 1]')
    expr = statements[0].values[0]
    lowering = Lowering({}, {})
    node = lowering.as_code(lowering.infer(expr), expr)
    vector, description = resolve(node, space, v.Context(rng, {}, {}), codebook)
    return np.asarray(vector, dtype=np.float64), description
