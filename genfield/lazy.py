"""Lazy public names for package ``__init__`` files: a name's module is imported on first use,
so importing a package stays cheap (no torch, no trimesh until they are needed)."""

from __future__ import annotations

import importlib
from collections.abc import Callable
from typing import Any


def lazy_getattr(package: str, public: dict[str, str]) -> Callable[[str], Any]:
    """A module ``__getattr__`` (PEP 562) serving ``public`` (name -> module defining it)."""

    def __getattr__(name: str) -> Any:
        if name in public:
            return getattr(importlib.import_module(public[name]), name)
        raise AttributeError(f"module {package!r} has no attribute {name!r}")

    return __getattr__
