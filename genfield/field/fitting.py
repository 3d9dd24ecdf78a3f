"""Fitting a code pair to a new asset with the network frozen (auto-decoder inference).

DeepSDF (Park et al. 2019, eq. 10) infers the code of an unseen shape by minimising the
training loss over the code alone, with the network fixed; here the same three loss terms
as training (``genfield.field.trainer.loss_terms``) are minimised over one (shape,
appearance) pair by Adam. The start is the training code that explains the new samples best
(lowest occupancy loss on a few thousand of them), which avoids poor local minima from zero;
the appearance code's own wave starts at the new asset's colour spectrum's peak, as in training
(``genfield.field.spectrum``).
"""

from __future__ import annotations

import dataclasses
import logging
import math
from dataclasses import dataclass

import numpy as np
import torch
from torch.nn import functional as F

from genfield.compute import heavy_work
from genfield.field.checkpoint import TrainState
from genfield.field.codebook import CodeBook
from genfield.field.data import TrainingData
from genfield.field.evaluate import iou, truth_grid
from genfield.field.grid import SIGMA_MAX
from genfield.field.model import Model
from genfield.field.spectrum import leading_wave
from genfield.field.trainer import loss_terms

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class FitSettings:
    """How hard to look for the code."""

    steps: int = 300  # Adam steps
    points: int = 4096  # occupancy samples a step
    surface_points: int = 1024  # colour samples a step
    lr: float = 2e-2  # Adam step size, cosine-decayed to 5%
    samples: int = 100_000  # ground-truth samples of the asset
    seed: int = 0  # seeds the samples and the batches


@dataclass(frozen=True)
class FitResult:
    shape: np.ndarray  # (Ds,)
    appearance: np.ndarray  # (Da,)
    start: str  # name of the training code it started from
    iou: float  # volumetric IoU at the model's evaluation resolution
    colour_l1: float  # mean |albedo - truth| at held-out surface samples
    final_loss: float


def _start_row(model: Model, truth, count: int = 4096) -> int:
    """The training code with the lowest occupancy cross-entropy on the first samples."""
    pts = torch.from_numpy(np.asarray(truth.points[:count], np.float32))[None]  # (1, n, 3)
    target = torch.from_numpy(np.asarray(truth.occupancy[:count], np.float32))[None]
    best, best_loss = 0, math.inf
    with torch.inference_mode():
        for row in range(len(model.codebook.names)):
            code = torch.from_numpy(model.codebook.shape[row])[None]
            logit, _ = model.network.geometry(pts, code)
            loss = float(F.binary_cross_entropy_with_logits(logit, target))
            if loss < best_loss:
                best, best_loss = row, loss
    return best


def fit_code(model: Model, asset, settings: FitSettings = FitSettings(), *,
             progress: bool = False) -> FitResult:
    """Optimise a code pair for ``asset`` (anything with ``occupancy``/``colour_srgb`` that
    ``genfield.assets.sample_ground_truth`` accepts); the model is not changed."""
    from genfield.assets import sample_ground_truth

    truth = sample_ground_truth(asset, settings.samples, seed=settings.seed)
    held = min(2048, len(truth.surface_points) // 4)  # surface samples kept out for scoring
    data = TrainingData([truth], held_out_surface=held)
    row = _start_row(model, truth)
    with heavy_work():
        return _optimise(model, asset, settings, truth, data, held, row, progress)


def _optimise(model: Model, asset, settings: FitSettings, truth, data: TrainingData, held: int,
              row: int, progress: bool) -> FitResult:
    from tqdm import tqdm

    shape = torch.nn.Parameter(torch.from_numpy(model.codebook.shape[row].copy())[None])
    start = model.codebook.appearance[row].copy()
    lead = model.network.leading_entries
    if lead:
        start[:lead] = leading_wave(data.surface_points[0].numpy(), data.surface_colour[0].numpy())
    appearance = torch.nn.Parameter(torch.from_numpy(start)[None])
    opt = torch.optim.Adam([shape, appearance], lr=settings.lr)
    state = TrainState(network=model.network, shape_codes=shape, appearance_codes=appearance,
                       optimiser=opt)
    t = model.config.training
    loss = math.nan
    for step in tqdm(range(settings.steps), desc="fitting", unit="step", disable=not progress):
        for group in opt.param_groups:  # cosine from lr to 5% of it (SGDR eq. 5, no restarts)
            group["lr"] = settings.lr * (0.05 + 0.95 * 0.5 * (1 + math.cos(math.pi * step / settings.steps)))
        batch = data.batch(settings.seed, step, 1, settings.points, settings.surface_points)
        terms = loss_terms(state, batch, model.config)
        total = terms["occupancy"] + t.colour_weight * terms["colour"] + t.code_penalty * terms["code"]
        opt.zero_grad(set_to_none=True)
        total.backward()
        opt.step()
        loss = float(total.detach())
    s, a = shape.detach()[0].numpy().copy(), appearance.detach()[0].numpy().copy()
    r = model.config.evaluation.iou_resolution
    grid = model.bake(s, a, r)
    v = iou(grid.density > 0.5 * SIGMA_MAX, truth_grid(asset, r))
    _, albedo = model.query(truth.surface_points[-held:], s, a)
    l1 = float(np.abs(albedo - truth.surface_colour[-held:]).mean())
    return FitResult(s, a, model.codebook.names[row], v, l1, loss)


def with_code(model: Model, name: str, family: str, source: str, fit: FitResult) -> Model:
    """A copy of the model with one more named code (the prior is left as it was fitted)."""
    if name in model.codebook.names:
        raise ValueError(f"the model already has a code named {name!r}")
    b = model.codebook
    book = CodeBook(names=(*b.names, name), families=(*b.families, family),
                    shape=np.vstack([b.shape, fit.shape[None]]),
                    appearance=np.vstack([b.appearance, fit.appearance[None]]),
                    prior_weights=b.prior_weights, prior_means=b.prior_means,
                    prior_chols=b.prior_chols)
    fitted = dict(model.metrics.get("fitted", {}))
    fitted[name] = {"iou": round(fit.iou, 6), "colour_l1": round(fit.colour_l1, 6),
                    "start": fit.start, "source": source}
    return dataclasses.replace(model, codebook=book, sources=(*model.sources, source),
                               metrics={**model.metrics, "fitted": fitted})
