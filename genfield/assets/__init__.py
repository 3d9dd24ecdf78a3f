"""Training sources: procedural part families, imported meshes, ground-truth point samples.

The public names are imported lazily, so ``import genfield.assets`` does not pull in trimesh.
"""

from __future__ import annotations

import importlib
from typing import Any

# public name -> module that defines it
_PUBLIC: dict[str, str] = {
    "Asset": "genfield.assets.asset",
    "Family": "genfield.assets.families",
    "Parameter": "genfield.assets.families",
    "builtin_families": "genfield.assets.families",
    "make_builtin": "genfield.assets.families",
    "builtin_assets": "genfield.assets.families",
    "describe_families": "genfield.assets.families",
    "load_mesh_assets": "genfield.assets.meshes",
    "GroundTruth": "genfield.assets.ground_truth",
    "sample_ground_truth": "genfield.assets.ground_truth",
    "sample_ground_truths": "genfield.assets.ground_truth",
}

__all__ = list(_PUBLIC)


def __getattr__(name: str) -> Any:
    if name in _PUBLIC:
        return getattr(importlib.import_module(_PUBLIC[name]), name)
    raise AttributeError(f"module 'genfield.assets' has no attribute {name!r}")
