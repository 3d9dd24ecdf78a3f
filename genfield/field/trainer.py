"""The training loop: auto-decoder optimisation of the network and every asset's code pair.

Loss of one step over a batch of B assets (DEVELOPERS.md, "Training"):

    L = mean_BCE(logit(x, z_s + e_s), o)                 occupancy, cross-entropy with logits
      + w_c * mean |albedo(f(x_s, z_s + e_s), z_a + e_a) - c|   colour L1 at surface samples
      + lambda * mean(|z_s|^2 + |z_r|^2)                  zero-mean Gaussian code prior,
                                                          DeepSDF eq. 9 (Park et al. 2019);
                                                          z_r: the appearance code after the
                                                          asset's own wave, which is a
                                                          frequency, not a draw around zero

with e ~ N(0, code_noise^2) fresh each step (0 by default): noise on the codes makes the
decoder answer sensibly for a neighbourhood of every code, as a variational auto-decoder
(Zadeh et al. 2019) does, so that draws from the prior between codes stay whole shapes.

Adam (Kingma and Ba 2015) with separate step sizes for weights and codes, a linear warm-up
and a cosine decay (Loshchilov and Hutter 2017, SGDR eq. 5 without restarts).
"""

from __future__ import annotations

import logging
import math
import signal
import threading
import time
from collections.abc import Callable
from pathlib import Path

import torch
from torch.nn import functional as F

from genfield.field.checkpoint import TrainState, save_checkpoint
from genfield.field.config import TrainConfig
from genfield.field.data import Batch, TrainingData

log = logging.getLogger(__name__)


def lr_factor(step: int, total: int, warmup: int, final: float) -> float:
    """Learning-rate multiplier at ``step`` of ``total``: linear warm-up over ``warmup`` steps,
    then cosine from 1 down to ``final``."""
    if step < warmup:
        return (step + 1) / warmup
    t = min(1.0, (step - warmup) / max(1, total - warmup))
    return final + (1.0 - final) * 0.5 * (1.0 + math.cos(math.pi * t))


def loss_terms(state: TrainState, batch: Batch, cfg: TrainConfig) -> dict[str, torch.Tensor]:
    """The three loss terms of one batch (see the module docstring)."""
    zs = state.shape_codes[batch.assets]  # (B, Ds)
    za = state.appearance_codes[batch.assets]  # (B, Da)
    code = zs.square().sum(1).mean() + state.network.rest_of(za).square().sum(1).mean()
    if batch.code_noise is not None:  # the decoder must answer for a neighbourhood of each code
        zs = zs + batch.code_noise[:, : zs.shape[1]]
        za = za + batch.code_noise[:, zs.shape[1] :]
    p = batch.points.shape[1]
    x = torch.cat([batch.points, batch.surface_points], dim=1)  # (B, P + Q, 3): one trunk pass
    logit, feature = state.network.geometry(x, zs)  # (B, P + Q), (B, P + Q, F)
    occupancy = F.binary_cross_entropy_with_logits(logit[:, :p], batch.occupancy)
    albedo = state.network.albedo(feature[:, p:], za)  # (B, Q, 3)
    colour = (albedo - batch.surface_colour).abs().mean()
    return {"occupancy": occupancy, "colour": colour, "code": code}


def train_step(state: TrainState, batch: Batch, cfg: TrainConfig, factor: float) -> dict[str, float]:
    """One Adam step at learning-rate multiplier ``factor``; returns the loss terms."""
    t = cfg.training
    for group in state.optimiser.param_groups:
        group["lr"] = group["base_lr"] * factor
    terms = loss_terms(state, batch, cfg)
    loss = terms["occupancy"] + t.colour_weight * terms["colour"] + t.code_penalty * terms["code"]
    state.optimiser.zero_grad(set_to_none=True)
    loss.backward()
    state.optimiser.step()
    state.step += 1
    return {k: float(v.detach()) for k, v in terms.items()}


class _Budget:
    """Progress towards the step count or the wall-clock budget, whichever ends first."""

    def __init__(self, cfg: TrainConfig, elapsed: float) -> None:
        self.steps, self.seconds = cfg.training.steps, cfg.training.seconds
        self.start = time.perf_counter() - elapsed

    @property
    def elapsed(self) -> float:
        return time.perf_counter() - self.start

    def fraction(self, step: int) -> float:
        f = step / self.steps
        return max(f, self.elapsed / self.seconds) if self.seconds > 0 else f

    def total_for_schedule(self, step: int) -> int:
        """The schedule's length in steps: the step count, or the pace-projected count."""
        f = self.fraction(step)
        return self.steps if f <= 0 else max(step + 1, min(self.steps, round(step / f)))


def run_training(cfg: TrainConfig, data: TrainingData, state: TrainState, *,
                 checkpoint_path: Path, names: list[str], progress: bool = True,
                 on_preview: Callable[[TrainState], None] | None = None) -> TrainState:
    """Optimise until the budget is spent. Ctrl-C saves a checkpoint, then re-raises.

    ``on_preview(state)`` runs every ``training.preview_every`` steps (if set).
    """
    from tqdm import tqdm

    t = cfg.training
    budget = _Budget(cfg, state.elapsed)
    state.network.train()
    bar = tqdm(total=t.steps, initial=state.step, desc="training", unit="step",
               disable=not progress, dynamic_ncols=True, leave=True)
    previous_handler = signal.getsignal(signal.SIGINT)
    try:
        while state.step < t.steps and budget.fraction(state.step) < 1.0:
            batch = data.batch(cfg.seed, state.step, t.assets_per_step, t.points_per_asset,
                               t.surface_points_per_asset, t.code_noise,
                               cfg.network.shape_dim + cfg.network.appearance_dim)
            total = budget.total_for_schedule(state.step)
            terms = train_step(state, batch, cfg, lr_factor(state.step, total, t.warmup_steps,
                                                            t.lr_final))
            state.elapsed = budget.elapsed
            bar.update(1)
            bar.set_postfix(occ=f"{terms['occupancy']:.4f}", col=f"{terms['colour']:.4f}",
                            code=f"{terms['code']:.3f}", refresh=False)
            if t.checkpoint_every and state.step % t.checkpoint_every == 0:
                save_checkpoint(checkpoint_path, state, cfg, names)
            if on_preview and t.preview_every and state.step % t.preview_every == 0:
                on_preview(state)
                state.network.train()
    except KeyboardInterrupt:
        bar.close()
        main = threading.current_thread() is threading.main_thread()  # signals: main thread only
        if main:
            signal.signal(signal.SIGINT, signal.SIG_IGN)  # a second Ctrl-C must not cut the file
        try:
            save_checkpoint(checkpoint_path, state, cfg, names)
        finally:
            if main:
                signal.signal(signal.SIGINT, previous_handler)
        log.info("interrupted at step %d; checkpoint saved to %s (continue with --resume %s)",
                 state.step, checkpoint_path, checkpoint_path)
        raise
    bar.close()
    state.network.eval()
    log.info("trained %d steps in %.1f s", state.step, state.elapsed)
    return state
