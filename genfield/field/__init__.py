"""The generative feature field: network, training, prior over codes, fitting, model file.

``load_model`` is imported lazily: ``genfield.field.codebook`` (numpy only) must stay
importable without torch, and importing it imports this package first.
"""

from __future__ import annotations

from genfield.lazy import lazy_getattr

_PUBLIC: dict[str, str] = {
    "load_model": "genfield.field.model",
    "Model": "genfield.field.model",
}

__all__ = list(_PUBLIC)


__getattr__ = lazy_getattr(__name__, _PUBLIC)
