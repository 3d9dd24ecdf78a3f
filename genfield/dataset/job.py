"""A render job as plain bytes and numbers, and the worker-side task that renders one image.

A ``JobSpec`` carries the recipe text and the model file's bytes, so a worker in another
process (or on another machine, under Dask) renders exactly what the writer's machine would,
without sharing a file system. The worker builds its pipeline (recipe, model, renderer) once
per spec and then turns indices into ``ImageResult``s; it never touches the dataset folder.

Renders are single-threaded in every executor (torch.set_num_threads(1)): a reduction split
over a different number of threads may round differently, and image i must be byte-identical
whatever ran it.
"""

from __future__ import annotations

import hashlib
import importlib
import json
import tempfile
import threading
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path
from typing import Protocol

from genfield.dataset.labels import ImageResult, label_image
from genfield.dataset.layout import OUTPUTS, split_of
from genfield.render.output import RenderOutput
from genfield.scene import Scene

RECIPE_PIPELINE = "genfield.dataset.job:recipe_pipeline"


class Pipeline(Protocol):
    """What a worker needs: scene ``index`` of the job, and its render (with amodal masks)."""

    def draw(self, index: int) -> Scene: ...

    def render(self, scene: Scene) -> RenderOutput: ...


@dataclass(frozen=True)
class JobSpec:
    """Everything that determines a dataset's files.

    ``factory`` names the function ("module:function") that builds the Pipeline from this
    spec in a worker; genfield's own is the recipe pipeline, tests plug in analytic ones.
    """

    recipe_name: str  # the recipe's file name (no folders), for the manifest and messages
    recipe_text: str  # the whole recipe
    model_name: str  # the model file's name (no folders)
    model_bytes: bytes  # the whole model file
    seed: int  # the run's seed
    count: int  # images in the whole dataset (all shards)
    splits: tuple[tuple[str, float], ...]  # (("train", 0.8), ("val", 0.1), ("test", 0.1))
    outputs: tuple[str, ...]  # files per image, in layout order; always includes "image"
    classes: tuple[str, ...]  # category labels, in recipe order
    factory: str = RECIPE_PIPELINE

    def __post_init__(self) -> None:
        if "image" not in self.outputs or any(o not in OUTPUTS for o in self.outputs):
            raise ValueError(f"outputs must include 'image' and be among {OUTPUTS}, got {self.outputs}")
        if abs(sum(f for _, f in self.splits) - 1.0) > 1e-9:
            raise ValueError(f"split fractions must sum to 1, got {self.splits}")

    @cached_property
    def recipe_sha256(self) -> str:
        return hashlib.sha256(self.recipe_text.encode("utf-8")).hexdigest()

    @cached_property
    def model_sha256(self) -> str:
        return hashlib.sha256(self.model_bytes).hexdigest()

    @cached_property
    def key(self) -> str:
        """A hash of everything that decides the output: same key, same bytes."""
        text = json.dumps([self.recipe_sha256, self.model_sha256, self.seed, self.count,
                           self.splits, self.outputs, self.classes, self.factory])
        return hashlib.sha256(text.encode()).hexdigest()

    def split(self, index: int) -> str:
        return split_of(index, self.splits)


@dataclass(frozen=True)
class _RecipePipeline:
    recipe: object
    model: object
    seed: int

    def draw(self, index: int) -> Scene:
        from genfield.recipe import draw_scene

        return draw_scene(self.recipe, self.model.codebook, self.seed, index)

    def render(self, scene: Scene) -> RenderOutput:
        from genfield.render import render_scene

        return render_scene(self.model, scene)


def recipe_pipeline(spec: JobSpec) -> Pipeline:
    """genfield's pipeline: the recipe and model rebuilt from the spec's bytes, the real renderer.

    The bytes go to a private temp folder for the loaders, which is removed once loaded.
    """
    from genfield.field import load_model
    from genfield.recipe import load_recipe

    with tempfile.TemporaryDirectory(prefix="genfield-job-") as tmp:
        model_path = Path(tmp) / spec.model_name
        model_path.write_bytes(spec.model_bytes)
        recipe_path = Path(tmp) / spec.recipe_name
        recipe_path.write_text(spec.recipe_text, encoding="utf-8")
        model = load_model(model_path)
        recipe = load_recipe(recipe_path, model=model_path)
    return _RecipePipeline(recipe, model, spec.seed)


_PIPELINES: dict[str, Pipeline] = {}
_LOCK = threading.Lock()


def pipeline_for(spec: JobSpec) -> Pipeline:
    """The spec's pipeline, built once per process (threads of one worker share it)."""
    with _LOCK:
        if spec.key not in _PIPELINES:
            module, _, name = spec.factory.partition(":")
            _PIPELINES[spec.key] = getattr(importlib.import_module(module), name)(spec)
        return _PIPELINES[spec.key]


def render_task(spec: JobSpec, index: int) -> ImageResult:
    """Render and label image ``index`` of ``spec``: the unit of work of every executor."""
    pipeline = pipeline_for(spec)
    scene = pipeline.draw(index)
    if scene.index != index:
        raise ValueError(f"the pipeline drew scene {scene.index} when asked for {index}")
    return label_image(scene, pipeline.render(scene), count=spec.count, split=spec.split(index),
                       classes=spec.classes, outputs=spec.outputs)
