"""The generative feature field: network, training, prior over codes, fitting, model file.

``load_model`` is imported lazily: ``genfield.field.codebook`` (numpy only) must stay
importable without torch, and importing it imports this package first.
"""

from __future__ import annotations

import importlib
from typing import Any

_PUBLIC: dict[str, str] = {
    "load_model": "genfield.field.model",
    "Model": "genfield.field.model",
}

__all__ = list(_PUBLIC)


def __getattr__(name: str) -> Any:
    if name in _PUBLIC:
        return getattr(importlib.import_module(_PUBLIC[name]), name)
    raise AttributeError(f"module 'genfield.field' has no attribute {name!r}")
