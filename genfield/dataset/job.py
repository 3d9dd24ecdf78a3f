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
import os
import tempfile
import threading
from collections import OrderedDict
from dataclasses import dataclass, replace
from functools import cached_property
from pathlib import Path, PurePosixPath
from typing import Protocol

from genfield.dataset.labels import ImageResult, label_image
from genfield.dataset.layout import OUTPUTS, split_of
from genfield.errors import DatasetError, GenfieldError, ModelFileError, UsageError
from genfield.render.options import RenderOptions
from genfield.render.output import RenderOutput
from genfield.scene import Scene

RECIPE_PIPELINE = "genfield.dataset.job:recipe_pipeline"
# One thread (see the module doc). A modest grid cache: named codes repeat and stay cached,
# codes drawn from the prior never repeat, so a large cache would only make memory grow
# with the number of images up to its bound.
DATASET_RENDER = RenderOptions(threads=1, memory_cache_mb=64.0)


def render_options(recipe) -> RenderOptions:
    """How a dataset's images are rendered: DATASET_RENDER at the recipe's ``detail``."""
    return replace(DATASET_RENDER, cells_per_pixel=recipe.dataset.detail)


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

    # the recipe file first, then the files it includes: (path relative to their common
    # folder, POSIX separators, never "..", text)
    recipe_files: tuple[tuple[str, str], ...]
    model_name: str  # the model file's name (no folders)
    model_bytes: bytes  # the whole model file
    seed: int  # the run's seed
    count: int  # images in the whole dataset (all shards)
    splits: tuple[tuple[str, float], ...]  # (("train", 0.8), ("val", 0.1), ("test", 0.1))
    outputs: tuple[str, ...]  # files per image, in layout order; always includes "image"
    classes: tuple[str, ...]  # category labels, in recipe order
    amodal_masks: bool = False  # also store each object's amodal mask (RLE) in its factors
    factory: str = RECIPE_PIPELINE

    def __post_init__(self) -> None:
        if "image" not in self.outputs or any(o not in OUTPUTS for o in self.outputs):
            raise ValueError(f"outputs must include 'image' and be among {OUTPUTS}, got {self.outputs}")
        if abs(sum(f for _, f in self.splits) - 1.0) > 1e-9:
            raise ValueError(f"split fractions must sum to 1, got {self.splits}")
        for rel, _ in self.recipe_files:
            parts = PurePosixPath(rel).parts
            if not parts or PurePosixPath(rel).is_absolute() or ".." in parts:
                raise ValueError(f"recipe file paths must be relative and inside, got {rel!r}")
        if PurePosixPath(self.model_name).name != self.model_name or self.model_name in ("", ".", ".."):
            raise ValueError(f"model_name must be a bare file name, got {self.model_name!r}")

    @property
    def recipe_name(self) -> str:
        """The recipe file's path relative to the folder of all its files."""
        return self.recipe_files[0][0]

    @property
    def recipe_text(self) -> str:
        """The recipe file's own text (without its includes)."""
        return self.recipe_files[0][1]

    @cached_property
    def recipe_sha256(self) -> str:
        """sha256 of every recipe file, paths and texts."""
        return hashlib.sha256(json.dumps(self.recipe_files).encode("utf-8")).hexdigest()

    @cached_property
    def model_sha256(self) -> str:
        return hashlib.sha256(self.model_bytes).hexdigest()

    @cached_property
    def key(self) -> str:
        """A hash of everything that decides the output: same key, same bytes."""
        text = json.dumps([self.recipe_sha256, self.model_sha256, self.seed, self.count,
                           self.splits, self.outputs, self.classes, self.amodal_masks, self.factory])
        return hashlib.sha256(text.encode()).hexdigest()

    def split(self, index: int) -> str:
        return split_of(index, self.splits)


@dataclass(frozen=True)
class _RecipePipeline:
    recipe: object
    model: object
    seed: int

    def draw(self, index: int) -> Scene:
        from genfield.recipe.draw import draw_scene

        return draw_scene(self.recipe, self.model.codebook, self.seed, index)

    def render(self, scene: Scene) -> RenderOutput:
        from genfield.render.renderer import render_scene

        return render_scene(self.model, scene, options=render_options(self.recipe))


_TEMP_FOLDERS: set[str] = set()  # where job recipes were read from, to be cut from messages


def load_job_recipe(spec: JobSpec, model_path: Path | None):
    """The job's recipe, checked again from its files (written to a private temp folder,
    removed once read); ``model_path`` stands in for the model the recipe names."""
    from genfield.recipe.loader import load_recipe

    with tempfile.TemporaryDirectory(prefix="genfield-recipe-") as tmp:
        _TEMP_FOLDERS.add(str(Path(tmp).resolve()) + os.sep)
        for rel, text in spec.recipe_files:
            path = Path(tmp) / rel
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_text(text, encoding="utf-8")
        return load_recipe(Path(tmp) / spec.recipe_name, model=model_path)


def _user_where(where: str | None) -> str | None:
    """An error's place with the job's temp folder cut off: ``tray.gfr:12:3``."""
    for folder in _TEMP_FOLDERS:
        if where and folder in where:
            return where.replace(folder, "")
    return where


def recipe_pipeline(spec: JobSpec) -> Pipeline:
    """genfield's pipeline: the recipe and model rebuilt from the spec's bytes, the real renderer."""
    from genfield.field.model import load_model

    with tempfile.TemporaryDirectory(prefix="genfield-model-") as tmp:
        model_path = Path(tmp) / spec.model_name
        model_path.write_bytes(spec.model_bytes)
        model = load_model(model_path)
        recipe = load_job_recipe(spec, model_path)
    return _RecipePipeline(recipe, model, spec.seed)


def job_of(recipe, recipe_path: Path | str, model_name: str, model_bytes: bytes, *,
           count: int | None = None, seed: int | None = None,
           factory: str = RECIPE_PIPELINE) -> JobSpec:
    """The job of a checked recipe (read from ``recipe_path``) with a model's name and bytes;
    ``count``/``seed`` override the recipe's."""
    if count is not None and count < 1:
        raise UsageError(f"--count must be at least 1, got {count}")
    if seed is not None and seed < 0:
        raise UsageError(f"--seed must be >= 0, got {seed}")
    unwritten = sorted(set(recipe.dataset.outputs) - set(OUTPUTS) - {"amodal"})
    if unwritten:
        raise DatasetError(f"genfield render does not write the output(s) {', '.join(unwritten)}",
                           where=str(recipe_path),
                           hint="drop them from the dataset outputs; 'genfield mesh' exports scene meshes")
    root = Path(recipe_path).resolve().parent  # the loader keeps every include inside it
    files = tuple((Path(f).resolve().relative_to(root).as_posix(), Path(f).read_text(encoding="utf-8"))
                  for f in recipe.files)
    wanted = set(recipe.dataset.outputs) | {"image"}
    return JobSpec(
        recipe_files=files,
        model_name=model_name,
        model_bytes=model_bytes,
        seed=recipe.dataset.seed if seed is None else seed,
        count=recipe.dataset.count if count is None else count,
        splits=tuple((name, float(f)) for name, f in recipe.dataset.splits.items()),
        outputs=tuple(o for o in OUTPUTS if o in wanted),
        amodal_masks="amodal" in recipe.dataset.outputs,
        classes=tuple(recipe.classes),
        factory=factory,
    )


def job_from_recipe(recipe_path: Path | str, *, model: Path | str | None = None,
                    count: int | None = None, seed: int | None = None) -> JobSpec:
    """The job a recipe file describes, with its model file's bytes (``model`` overrides the
    file the recipe names; ``count``/``seed`` its dataset settings).

    Raises RecipeError for a bad recipe, UsageError for a bad option, ModelFileError for a
    model that cannot be read, DatasetError for an output genfield render does not write.
    The model is loaded here, so that its errors (and the recipe's code names, checked
    against it) name the user's files, not the workers' copies.
    """
    from genfield.field.model import load_model
    from genfield.recipe.codes import check_codes
    from genfield.recipe.loader import load_recipe

    recipe = load_recipe(recipe_path, model=model)
    if recipe.model_path is None:
        raise UsageError("the recipe names no model file", where=str(recipe_path),
                         hint='add a line model "FILE" to the recipe, or give --model')
    try:
        model_bytes = Path(recipe.model_path).read_bytes()
    except OSError as err:
        raise ModelFileError(f"cannot read the model file: {err.strerror}", where=str(recipe.model_path),
                             hint="train one with 'genfield train', or give --model") from None
    check_codes(recipe, load_model(recipe.model_path).codebook)  # unknown names fail here
    return job_of(recipe, recipe_path, Path(recipe.model_path).name, model_bytes, count=count, seed=seed)


_PIPELINES: OrderedDict[str, Pipeline] = OrderedDict()
_KEEP_PIPELINES = 2  # a long-lived worker (Dask) may serve a few jobs; older ones are dropped
_LOCK = threading.Lock()


def pipeline_for(spec: JobSpec) -> Pipeline:
    """The spec's pipeline, built once per process (threads of one worker share it)."""
    with _LOCK:
        if spec.key not in _PIPELINES:
            module, _, name = spec.factory.partition(":")
            _PIPELINES[spec.key] = getattr(importlib.import_module(module), name)(spec)
            while len(_PIPELINES) > _KEEP_PIPELINES:
                _PIPELINES.popitem(last=False)
        _PIPELINES.move_to_end(spec.key)
        return _PIPELINES[spec.key]


def render_task(spec: JobSpec, index: int) -> ImageResult:
    """Render and label image ``index`` of ``spec``: the unit of work of every executor."""
    pipeline = pipeline_for(spec)
    try:
        scene = pipeline.draw(index)
    except GenfieldError as err:  # e.g. objects that cannot be placed: name the user's file
        err.where = _user_where(err.where)
        raise
    if scene.index != index:
        raise ValueError(f"the pipeline drew scene {scene.index} when asked for {index}")
    return label_image(scene, pipeline.render(scene), count=spec.count, split=spec.split(index),
                       classes=spec.classes, outputs=spec.outputs, amodal_masks=spec.amodal_masks)
