"""One module per CLI verb: ``add_arguments(parser)`` and ``run(args) -> exit code``.

These modules import only the standard library at the top; the work (and torch) is imported
inside ``run`` so that the CLI starts instantly.
"""

from __future__ import annotations

from genfield.errors import NotBuiltError


def not_built(verb: str, what: str) -> NotBuiltError:
    """The error an unbuilt verb raises: it says so and exits 2."""
    return NotBuiltError(f"'genfield {verb}' is not built yet ({what})")
