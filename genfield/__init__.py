"""genfield: learn a generative feature field over objects on a CPU, and render labelled
synthetic datasets from declarative scene recipes.

Everything the command line does is one call away; the names below are imported lazily so
that ``import genfield`` stays cheap (no torch until a model is used).
"""

from __future__ import annotations

from genfield.lazy import lazy_getattr

__version__ = "0.1.0"

# public name -> module that defines it
_PUBLIC: dict[str, str] = {
    "GenfieldError": "genfield.errors",
    "Scene": "genfield.scene",
    "load_recipe": "genfield.recipe.loader",
    "draw_scene": "genfield.recipe.draw",
    "SceneDataset": "genfield.dataset.reader",
    "render_scene": "genfield.render.renderer",
    "RenderOptions": "genfield.render.options",
    "extract_mesh": "genfield.mesh.extract",
    "variant_mesh": "genfield.mesh.from_model",
    "scene_parts": "genfield.mesh.from_model",
    "write_mesh": "genfield.mesh.export",
    "write_scene": "genfield.mesh.export",
    "Asset": "genfield.assets.asset",
    "builtin_families": "genfield.assets.families",
    "make_builtin": "genfield.assets.families",
    "builtin_assets": "genfield.assets.families",
    "load_mesh_assets": "genfield.assets.meshes",
    "sample_ground_truth": "genfield.assets.ground_truth",
    "trace_reference": "genfield.render.reference",
    "load_model": "genfield.field.model",
    "read_codebook": "genfield.field.codebook",
    "grid_sheet": "genfield.sheets.layout",
    "contact_sheet": "genfield.sheets.layout",
    "label_overlay": "genfield.sheets.overlay",
    "depth_thumbnail": "genfield.sheets.overlay",
    "latent_plan": "genfield.sheets.studio",
    "latent_sweep": "genfield.sheets.make",
    "code_sheet": "genfield.sheets.make",
    "load_recipe_and_model": "genfield.sheets.recipes",
    "recipe_sweep": "genfield.sheets.recipes",
    "recipe_preview": "genfield.sheets.recipes",
}

__all__ = ["__version__", *_PUBLIC]


__getattr__ = lazy_getattr(__name__, _PUBLIC)
