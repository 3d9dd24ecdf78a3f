"""From a config to a model file: sources, ground truth, training, prior, measured figures.

This is what ``genfield train`` runs. Every step is one call into its own module; this one
only wires them together and decides what goes into the file.
"""

from __future__ import annotations

import copy
import glob
import logging
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from genfield.compute import heavy_work
from genfield.errors import ConfigError
from genfield.field.checkpoint import TrainState, load_checkpoint, new_state
from genfield.field.codebook import CodeBook
from genfield.field.config import TrainConfig
from genfield.field.data import TrainingData
from genfield.field.evaluate import score_asset, summarise
from genfield.field.model import Model
from genfield.field.prior import with_prior
from genfield.field.spectrum import leading_waves
from genfield.field.trainer import run_training

log = logging.getLogger(__name__)

PRIOR_TEMPERATURE = 1.0  # the temperature at which validity is reported (issue 5)


@dataclass(frozen=True)
class Sources:
    """The assets to train on, and unseen assets of the same families for the generative
    figures (built-in indices after the training ones)."""

    assets: list
    holdout: list


def resolve_sources(cfg: TrainConfig, base_dir: Path) -> Sources:
    """Built-in assets and mesh files named by the config (globs relative to ``base_dir``)."""
    from genfield.assets import builtin_assets, load_mesh_assets, make_builtin

    s = cfg.sources
    assets = builtin_assets(dict(s.families), s.seed) if s.families else []
    for pattern in s.meshes:
        full = pattern if Path(pattern).is_absolute() else str(base_dir / pattern)
        if not glob.glob(full):
            raise ConfigError(f"sources.meshes: no file matches {pattern!r}", where=str(base_dir),
                              hint="mesh paths are relative to the config file's folder")
        assets.extend(load_mesh_assets(full))
    names = [a.name for a in assets]
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise ConfigError(f"sources: two training assets are both called {dup!r}",
                          hint="rename one of the mesh files")
    h = cfg.evaluation.holdout_per_family
    holdout = [make_builtin(fam, n + i, s.seed) for fam, n in s.families.items() for i in range(h)]
    return Sources(assets=assets, holdout=holdout)


def sample_truths(assets: list, cfg: TrainConfig, progress: bool) -> list:
    """Ground-truth samples of every asset (cached on disk by the asset package); built-in
    assets missing from the cache are sampled by one process per training thread."""
    from genfield.assets import sample_ground_truths

    return sample_ground_truths(assets, cfg.sources.samples_per_asset, seed=cfg.seed,
                                processes=cfg.resolved_threads(), progress=progress)


def model_from_state(cfg: TrainConfig, state: TrainState, assets: list) -> Model:
    """A Model holding a copy of the trained network and the codes, with a fitted prior."""
    book = CodeBook(
        names=tuple(a.name for a in assets), families=tuple(a.family for a in assets),
        shape=state.shape_codes.detach().numpy().copy(),
        appearance=state.appearance_codes.detach().numpy().copy(),
        prior_weights=np.ones(1), prior_means=np.zeros((1, 1)), prior_chols=np.ones((1, 1, 1)),
    )
    book, info = with_prior(book, cfg.prior.kind, cfg.prior.bandwidth)
    net = copy.deepcopy(state.network)
    return Model(config=cfg, network=net, codebook=book, sources=tuple(a.source for a in assets),
                 prior_info=info)


def measure(model: Model, assets: list, truths: list, holdout: list, *, held_surface: int,
            progress: bool) -> dict:
    """The figures stored in the model file (see DEVELOPERS.md, "Metrics")."""
    from tqdm import tqdm

    from genfield.field.variants import score_prior
    from genfield.field.views import score_views

    e, cfg = model.config.evaluation, model.config
    scores = []
    for row, (asset, truth) in enumerate(tqdm(list(zip(assets, truths, strict=True)),
                                              desc="scoring", unit="asset", disable=not progress)):
        scores.append(score_asset(model, row, asset, _held_out(truth, held_surface),
                                  e.iou_resolution, held_surface))
    metrics = {"training_assets": len(assets), "iou_resolution": e.iou_resolution,
               "fit": summarise(scores)}
    if e.views:
        metrics["views"] = score_views(model, assets, views=e.views, size=e.view_size)
    if cfg.prior.samples:
        metrics["prior"] = score_prior(model, holdout, samples=cfg.prior.samples,
                                       temperature=PRIOR_TEMPERATURE, seed=cfg.seed,
                                       cloud_points=e.cloud_points)
    return metrics


@dataclass(frozen=True)
class _Surface:
    surface_points: np.ndarray
    surface_colour: np.ndarray


def _held_out(truth, count: int) -> _Surface:
    """The last ``count`` surface samples: never seen in training (TrainingData drops them)."""
    return _Surface(truth.surface_points[-count:], truth.surface_colour[-count:])


def train(cfg: TrainConfig, base_dir: Path, out: Path, *, resume: Path | None = None,
          progress: bool = True) -> Model:
    """Train, score and write the model file ``out``; returns the model."""
    with heavy_work(cfg.resolved_threads()):
        return _train(cfg, base_dir, out, resume, progress)


def _train(cfg: TrainConfig, base_dir: Path, out: Path, resume: Path | None, progress: bool) -> Model:
    sources = resolve_sources(cfg, base_dir)
    truths = sample_truths(sources.assets, cfg, progress)
    held = cfg.evaluation.surface_points
    data = TrainingData(truths, held_out_surface=held)
    names = [a.name for a in sources.assets]
    if resume:
        state = load_checkpoint(resume, cfg, names)
    else:
        waves = leading_waves(data.surface_points.numpy(), data.surface_colour.numpy())
        state = new_state(cfg, len(names), waves)
    checkpoint = out.with_name(out.name + ".ckpt")
    preview = out.with_name(out.stem + ".preview.png")

    def on_preview(s: TrainState) -> None:
        from genfield.field.views import write_preview

        write_preview(model_from_state(cfg, s, sources.assets), sources.assets, preview, s.step)

    state = run_training(cfg, data, state, checkpoint_path=checkpoint, names=names,
                         progress=progress, on_preview=on_preview)
    model = model_from_state(cfg, state, sources.assets)
    model.metrics = {"steps": state.step,
                     **measure(model, sources.assets, truths, sources.holdout,
                               held_surface=held, progress=progress)}
    model.save(out)
    from genfield.field.views import write_preview

    write_preview(model, sources.assets, preview, state.step)
    return model
