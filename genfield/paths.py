"""Where genfield keeps its caches and finds the files it ships (the recipe grammar).

Caches live under ``$GENFIELD_CACHE`` if set, else ``~/.cache/genfield``; nothing in a cache
is needed for correctness, only for speed (a cache entry is keyed by the content it came from).
"""

from __future__ import annotations

import os
from pathlib import Path

_PACKAGE_DIR = Path(__file__).resolve().parent


def cache_dir(*parts: str) -> Path:
    """The cache folder (created on demand), or a sub-folder of it."""
    root = Path(os.environ.get("GENFIELD_CACHE") or Path.home() / ".cache" / "genfield")
    path = root.joinpath(*parts)
    path.mkdir(parents=True, exist_ok=True)
    return path


def grammar_file(name: str = "recipe.lark") -> Path:
    """The path of a shipped grammar file.

    An installed wheel carries the grammar inside the package (``genfield/grammar/``, see the
    hatch ``force-include`` in pyproject.toml); a checkout or editable install keeps it at the
    top of the repository (``grammar/``). Both are looked for, the wheel's place first.
    """
    for folder in (_PACKAGE_DIR / "grammar", _PACKAGE_DIR.parent / "grammar"):
        candidate = folder / name
        if candidate.is_file():
            return candidate
    raise FileNotFoundError(f"grammar file {name!r} is missing from the genfield installation")
