"""Training: a seconds-long overfit, the schedule, reproducible files, Ctrl-C and resume."""

from __future__ import annotations

import math

import numpy as np
import pytest
import torch
from _field_toys import tiny_model, toy_assets, toy_truth

from genfield.errors import ModelFileError
from genfield.field import trainer
from genfield.field.config import config_from_dict
from genfield.field.data import TrainingData
from genfield.field.evaluate import iou, truth_grid
from genfield.field.grid import SIGMA_MAX
from genfield.field.pipeline import train

TINY = {
    "seed": 5, "threads": 1,
    "sources": {"families": {"washer": 1, "hex_nut": 1}, "samples_per_asset": 6000},
    "network": {"shape_dim": 6, "appearance_dim": 7, "octaves": 3, "width": 32, "depth": 2,
                "feature_dim": 4, "colour_width": 8},
    "training": {"steps": 40, "assets_per_step": 2, "points_per_asset": 256,
                 "surface_points_per_asset": 64, "warmup_steps": 5, "lr_network": 3e-3,
                 "lr_codes": 3e-2},
    "prior": {"samples": 3},
    "evaluation": {"iou_resolution": 17, "surface_points": 128, "views": 1, "view_size": 16,
                   "holdout_per_family": 1, "cloud_points": 64},
}


@pytest.fixture(autouse=True)
def _private_cache(tmp_path_factory, monkeypatch):
    monkeypatch.setenv("GENFIELD_CACHE", str(tmp_path_factory.getbasetemp() / "cache"))
    torch.set_num_threads(1)


def test_overfit_smoke_reaches_the_shapes():
    model, assets = tiny_model(steps=150, count=2)  # a sphere and a box
    for row, asset in enumerate(assets):
        grid = model.bake(model.codebook.shape[row], model.codebook.appearance[row], 33)
        assert iou(grid.density > SIGMA_MAX / 2, truth_grid(asset, 33)) > 0.85, asset.name


def test_schedule_warms_up_then_decays_by_cosine():
    assert trainer.lr_factor(0, 100, 10, 0.1) == pytest.approx(0.1)
    assert trainer.lr_factor(9, 100, 10, 0.1) == pytest.approx(1.0)
    assert trainer.lr_factor(10, 100, 10, 0.1) == pytest.approx(1.0)
    mid = 10 + 45
    assert trainer.lr_factor(mid, 100, 10, 0.1) == pytest.approx(0.1 + 0.9 * 0.5 * (1 + math.cos(math.pi / 2)))
    assert trainer.lr_factor(100, 100, 10, 0.1) == pytest.approx(0.1)


def test_batches_are_a_function_of_seed_and_step():
    data = TrainingData([toy_truth(a, 2000, seed=0) for a in toy_assets(3)])
    a, b = data.batch(1, 7, 2, 32, 8), data.batch(1, 7, 2, 32, 8)
    assert torch.equal(a.points, b.points) and torch.equal(a.assets, b.assets)
    assert not torch.equal(a.points, data.batch(1, 8, 2, 32, 8).points)


@pytest.fixture(scope="module")
def first_run(tmp_path_factory):
    import os

    os.environ["GENFIELD_CACHE"] = str(tmp_path_factory.getbasetemp() / "cache")
    torch.set_num_threads(1)
    out = tmp_path_factory.mktemp("run") / "a.safetensors"
    model = train(config_from_dict(TINY), out.parent, out, progress=False)
    return model, out


def test_a_training_run_writes_model_metrics_and_preview(first_run):
    model, out = first_run
    m = model.metrics
    assert m["steps"] == 40 and m["training_assets"] == 2
    assert set(m["fit"]["per_family"]) == {"washer", "hex_nut"}
    assert 0.0 <= m["fit"]["iou_worst"] <= m["fit"]["iou_mean"] <= 1.0
    assert 0.0 <= m["views"]["mask_iou_mean"] <= 1.0 and np.isfinite(m["views"]["psnr_mean"])
    assert 0.0 <= m["prior"]["valid_fraction"] <= 1.0
    g = m["prior"]["generative"]
    assert g["reference"] == 2 and 0.0 <= g["nna"] <= 1.0
    assert out.with_name("a.preview.png").is_file()


def test_same_seed_and_threads_give_the_same_file(first_run, tmp_path):
    _, out = first_run
    again = tmp_path / "b.safetensors"
    train(config_from_dict(TINY), tmp_path, again, progress=False)
    assert again.read_bytes() == out.read_bytes()


def test_ctrl_c_saves_a_checkpoint_and_resume_gives_the_same_file(first_run, tmp_path, monkeypatch):
    _, out = first_run
    target = tmp_path / "c.safetensors"
    real_step = trainer.train_step
    calls = []

    def interrupted(state, batch, cfg, factor):
        calls.append(state.step)
        if len(calls) == 17:
            raise KeyboardInterrupt
        return real_step(state, batch, cfg, factor)

    monkeypatch.setattr(trainer, "train_step", interrupted)
    with pytest.raises(KeyboardInterrupt):
        train(config_from_dict(TINY), tmp_path, target, progress=False)
    checkpoint = tmp_path / "c.safetensors.ckpt"
    assert checkpoint.is_file() and not target.exists()
    monkeypatch.setattr(trainer, "train_step", real_step)
    train(config_from_dict(TINY), tmp_path, target, resume=checkpoint, progress=False)
    assert target.read_bytes() == out.read_bytes()


def test_resume_refuses_a_checkpoint_of_another_config(first_run, tmp_path, monkeypatch):
    calls = []
    real_step = trainer.train_step

    def interrupted(state, batch, cfg, factor):
        calls.append(1)
        if len(calls) == 3:
            raise KeyboardInterrupt
        return real_step(state, batch, cfg, factor)

    monkeypatch.setattr(trainer, "train_step", interrupted)
    target = tmp_path / "d.safetensors"
    with pytest.raises(KeyboardInterrupt):
        train(config_from_dict(TINY), tmp_path, target, progress=False)
    monkeypatch.setattr(trainer, "train_step", real_step)
    other = {**TINY, "network": {**TINY["network"], "width": 16}}
    with pytest.raises(ModelFileError, match="different config"):
        train(config_from_dict(other), tmp_path, target, resume=tmp_path / "d.safetensors.ckpt",
              progress=False)
