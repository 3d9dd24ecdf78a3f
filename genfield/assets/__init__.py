"""Training sources: procedural part families, imported meshes, ground-truth point samples.

The public names are imported lazily, so ``import genfield.assets`` does not pull in trimesh.
"""

from __future__ import annotations

from genfield.lazy import lazy_getattr

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


__getattr__ = lazy_getattr(__name__, _PUBLIC)
