"""Errors at a place in a recipe, and "did you mean" for names that are nearly right."""

from __future__ import annotations

from difflib import get_close_matches

from genfield.errors import RecipeError
from genfield.recipe.ast import Pos


def error_at(message: str, pos: Pos, hint: str | None = None) -> RecipeError:
    """A RecipeError at ``pos``: ``file:line:column``, the line and a caret."""
    return RecipeError(message, where=pos.where, hint=hint, context=pos.context())


def nearest(name: str, known: list[str]) -> str | None:
    """The known name closest to ``name`` (difflib's ratio >= 0.6), or None."""
    near = get_close_matches(name, known, n=1, cutoff=0.6)
    return near[0] if near else None


def unknown(what: str, name: str, known: list[str], *, pos: Pos | None = None,
            where: str | None = None, extra: str | None = None) -> RecipeError:
    """``unknown <what> 'name'`` with the nearest known name as the hint."""
    near = nearest(name, known)
    if near is not None:
        hint = f"did you mean '{near}'?"
    elif extra is not None:
        hint = extra
    elif known:
        shown = ", ".join(known[:12]) + (", ..." if len(known) > 12 else "")
        hint = f"known: {shown}"
    else:
        hint = None
    if pos is not None:
        return error_at(f"unknown {what} '{name}'", pos, hint)
    return RecipeError(f"unknown {what} '{name}'", where=where, hint=hint)
