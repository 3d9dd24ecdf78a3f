"""Training state (weights, codes, Adam moments, step) and its checkpoint file.

A checkpoint is a safetensors file like the model file (same checksum, never pickle) with its
own format name. Resuming restores the exact state, and the batches are a function of the
step (genfield.field.data), so a run interrupted and resumed writes the same model file as
one that never stopped.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass

import numpy as np
import torch

from genfield.errors import ModelFileError
from genfield.field.config import TrainConfig, config_from_dict
from genfield.field.modelfile import read_verified, write_verified
from genfield.field.network import FieldNetwork
from genfield.field.prior import CODE_INIT_STD

CHECKPOINT_FORMAT = "genfield-checkpoint"


@dataclass
class TrainState:
    """Everything the optimisation changes."""

    network: FieldNetwork
    shape_codes: torch.nn.Parameter  # (A, Ds)
    appearance_codes: torch.nn.Parameter  # (A, Da)
    optimiser: torch.optim.Adam
    step: int = 0  # optimiser steps taken
    elapsed: float = 0.0  # seconds of training so far (for the wall-clock budget)


def new_state(cfg: TrainConfig, assets: int, waves: np.ndarray | None = None) -> TrainState:
    """Fresh weights (torch's default init) and codes drawn from N(0, CODE_INIT_STD^2),
    seeded by ``cfg.seed`` without touching torch's global generator.

    ``waves`` (assets, 4): each asset's own colour wave (``genfield.field.spectrum``), the
    start of the first appearance-code entries when the network has own waves."""
    with torch.random.fork_rng(devices=[]):
        torch.manual_seed(cfg.seed)
        net = FieldNetwork(cfg.network)
        shape = torch.randn(assets, cfg.network.shape_dim) * CODE_INIT_STD
        appearance = torch.randn(assets, cfg.network.appearance_dim) * CODE_INIT_STD
    if net.leading_entries and waves is not None:
        appearance[:, : net.leading_entries] = torch.from_numpy(np.asarray(waves, np.float32))
    shape_p, app_p = torch.nn.Parameter(shape), torch.nn.Parameter(appearance)
    t = cfg.training
    opt = torch.optim.Adam([
        {"params": list(net.parameters()), "lr": t.lr_network, "base_lr": t.lr_network},
        {"params": [shape_p, app_p], "lr": t.lr_codes, "base_lr": t.lr_codes},
    ])
    return TrainState(network=net, shape_codes=shape_p, appearance_codes=app_p, optimiser=opt)


def _params(state: TrainState) -> list[torch.Tensor]:
    return [p for group in state.optimiser.param_groups for p in group["params"]]


def save_checkpoint(path: str | os.PathLike, state: TrainState, cfg: TrainConfig,
                    names: list[str]) -> None:
    tensors = {f"net.{k}": v.detach().numpy() for k, v in state.network.state_dict().items()}
    tensors["codes.shape"] = state.shape_codes.detach().numpy()
    tensors["codes.appearance"] = state.appearance_codes.detach().numpy()
    for i, p in enumerate(_params(state)):
        moments = state.optimiser.state.get(p)
        if moments:
            tensors[f"adam.{i}.exp_avg"] = moments["exp_avg"].numpy()
            tensors[f"adam.{i}.exp_avg_sq"] = moments["exp_avg_sq"].numpy()
            tensors[f"adam.{i}.step"] = np.array([float(moments["step"])], np.float64)
    text = {"config": json.dumps(cfg.to_dict(), sort_keys=True), "names": json.dumps(names),
            "step": str(state.step), "elapsed": repr(state.elapsed)}
    write_verified(path, {k: np.array(v) for k, v in tensors.items()}, text, CHECKPOINT_FORMAT)


# Keys that may differ between a checkpoint and the run resuming it: budgets and reporting.
_RESUMABLE = {"threads", "training.steps", "training.seconds", "training.preview_every",
              "training.checkpoint_every"}


def _flat(d: dict, prefix: str = "") -> dict[str, object]:
    out: dict[str, object] = {}
    for k, v in d.items():
        if isinstance(v, dict) and k != "families":
            out.update(_flat(v, f"{prefix}{k}."))
        else:
            out[f"{prefix}{k}"] = list(v) if isinstance(v, tuple) else v
    return out


def load_checkpoint(path: str | os.PathLike, cfg: TrainConfig, names: list[str]) -> TrainState:
    """Restore a TrainState; the checkpoint must come from the same config and sources."""
    where = str(path)
    tensors, text = read_verified(path, CHECKPOINT_FORMAT, "checkpoint")
    try:
        saved = config_from_dict(json.loads(text["config"]), where=where)
        saved_names = json.loads(text["names"])
        step, elapsed = int(text["step"]), float(text["elapsed"])
    except (KeyError, ValueError) as err:
        raise ModelFileError(f"checkpoint metadata is incomplete ({err})", where=where) from None
    a, b = _flat(saved.to_dict()), _flat(cfg.to_dict())
    differ = sorted(k for k in a if a[k] != b.get(k) and k not in _RESUMABLE)
    if differ:
        raise ModelFileError(f"checkpoint was made with a different config ({differ[0]}: "
                             f"{a[differ[0]]!r} there, {b.get(differ[0])!r} now)", where=where,
                             hint="resume with the config it was trained with")
    if saved_names != names:
        raise ModelFileError("checkpoint was made from different training assets", where=where)
    state = new_state(cfg, len(names))
    try:
        state.network.load_state_dict({k[4:]: torch.from_numpy(np.array(v))
                                       for k, v in tensors.items() if k.startswith("net.")})
        with torch.no_grad():
            state.shape_codes.copy_(torch.from_numpy(tensors["codes.shape"]))
            state.appearance_codes.copy_(torch.from_numpy(tensors["codes.appearance"]))
        for i, p in enumerate(_params(state)):
            if f"adam.{i}.exp_avg" in tensors:
                state.optimiser.state[p] = {
                    "step": torch.tensor(float(tensors[f"adam.{i}.step"][0])),
                    "exp_avg": torch.from_numpy(np.array(tensors[f"adam.{i}.exp_avg"])),
                    "exp_avg_sq": torch.from_numpy(np.array(tensors[f"adam.{i}.exp_avg_sq"])),
                }
    except (KeyError, RuntimeError) as err:
        raise ModelFileError(f"checkpoint arrays do not fit the network ({err})",
                             where=where) from None
    state.step, state.elapsed = step, elapsed
    return state
