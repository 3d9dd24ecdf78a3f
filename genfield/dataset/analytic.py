"""A job whose field is exact: built-in family assets as an AnalyticModel, no trained network.

Everything else is genfield's real pipeline (the recipe loader, ``draw_scene``, the renderer),
so tests and benchmarks can run ``write_dataset`` end to end, and compare its labels with the
reference tracer on the very same signed distances, without training a model first. The
job's "model file" is a small JSON list of the assets, ``[["cup", 0], ["washer", 3], ...]``;
their names (``cup-0000``) are the codes a recipe may name, each one-hot.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from genfield.dataset.job import JobSpec, job_of, load_job_recipe, render_options
from genfield.field.codebook import CodeBook
from genfield.render.output import RenderOutput
from genfield.scene import Scene

FACTORY = "genfield.dataset.analytic:analytic_pipeline"
MODEL_NAME = "analytic-assets.json"


def analytic_assets(spec: JobSpec) -> list:
    """The job's assets (genfield.assets.Asset), in code order."""
    from genfield.assets.families import make_builtin

    return [make_builtin(family, int(index)) for family, index in json.loads(spec.model_bytes)]


def one_hot_codebook(names: list[str]) -> CodeBook:
    """Codes e_i for n names, and a standard normal prior over the joint code (an analytic
    model reads a code's largest entry, so a prior draw picks one asset at random)."""
    n = len(names)
    eye = np.eye(n, dtype=np.float32)
    return CodeBook(names=tuple(names), families=tuple(name.rsplit("-", 1)[0] for name in names),
                    shape=eye, appearance=eye.copy(), prior_weights=np.ones(1),
                    prior_means=np.zeros((1, 2 * n)), prior_chols=np.eye(2 * n)[None])


@dataclass(frozen=True)
class AnalyticPipeline:
    recipe: object
    model: object  # genfield.render.analytic.AnalyticModel
    codebook: CodeBook
    seed: int

    def draw(self, index: int) -> Scene:
        from genfield.recipe.draw import draw_scene

        return draw_scene(self.recipe, self.codebook, self.seed, index)

    def render(self, scene: Scene) -> RenderOutput:
        from genfield.render.renderer import render_scene

        return render_scene(self.model, scene, options=render_options(self.recipe))


def analytic_pipeline(spec: JobSpec) -> AnalyticPipeline:
    """Build the pipeline from the job's recipe files and asset list (the factory)."""
    from genfield.render.analytic import AnalyticModel, AnalyticShape

    assets = analytic_assets(spec)
    model = AnalyticModel([AnalyticShape(a.name, a.sdf, a.colour_srgb) for a in assets])
    recipe = load_job_recipe(spec, Path(MODEL_NAME))
    return AnalyticPipeline(recipe, model, one_hot_codebook([a.name for a in assets]), spec.seed)


def analytic_job(recipe_path: Path | str, assets: list[tuple[str, int]], *,
                 count: int | None = None, seed: int | None = None) -> JobSpec:
    """The job of a recipe file on the analytic model of ``assets``, (family, index) pairs."""
    from genfield.assets.families import asset_name
    from genfield.recipe.codes import check_codes
    from genfield.recipe.loader import load_recipe

    recipe = load_recipe(recipe_path, model=MODEL_NAME)
    check_codes(recipe, one_hot_codebook([asset_name(family, int(i), 0) for family, i in assets]))
    model_bytes = json.dumps([[family, int(i)] for family, i in assets]).encode()
    return job_of(recipe, recipe_path, MODEL_NAME, model_bytes, count=count, seed=seed, factory=FACTORY)
