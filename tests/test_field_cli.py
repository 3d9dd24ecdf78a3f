"""The train, inspect and fit verbs end to end on a tiny config."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pytest

TINY_TOML = """\
seed = 2
threads = 1
[sources]
families = { washer = 1, bushing = 1 }
samples_per_asset = 6000
[network]
shape_dim = 6
appearance_dim = 7
octaves = 3
width = 32
depth = 2
feature_dim = 4
colour_width = 8
[training]
steps = 30
assets_per_step = 2
points_per_asset = 256
surface_points_per_asset = 64
warmup_steps = 5
[prior]
samples = 2
[evaluation]
iou_resolution = 17
surface_points = 128
views = 1
view_size = 16
holdout_per_family = 1
cloud_points = 64
"""


def _cli(*args, env):
    return subprocess.run([sys.executable, "-m", "genfield", *args], capture_output=True,
                          text=True, timeout=600, env=env)


@pytest.fixture(scope="module")
def trained(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cli")
    env = {**os.environ, "GENFIELD_CACHE": str(folder / "cache")}
    (folder / "tiny.toml").write_text(TINY_TOML)
    out = folder / "tiny.safetensors"
    proc = _cli("train", str(folder / "tiny.toml"), "--out", str(out), "--quiet", env=env)
    assert proc.returncode == 0, proc.stderr
    return folder, out, env, proc


def test_train_prints_a_summary_and_writes_the_files(trained):
    folder, out, _, proc = trained
    assert out.is_file() and (folder / "tiny.preview.png").is_file()
    assert proc.stdout.startswith(f"wrote {out}: 2 codes, 30 steps, IoU@17 mean")


def test_inspect_shows_codes_sources_prior_and_metrics(trained):
    _, out, env, _ = trained
    text = _cli("inspect", str(out), env=env)
    assert text.returncode == 0, text.stderr
    for piece in ("genfield model format 1", "network parameters", "washer-0000",
                  "builtin:bushing:seed=0:index=0", "prior: kernel mixture over the codes, bandwidth 0.3",
                  "fit: IoU@17", "views: mask IoU", "prior samples:"):
        assert piece in text.stdout, piece
    info = json.loads(_cli("inspect", str(out), "--json", env=env).stdout)
    assert [c["name"] for c in info["codes"]] == ["washer-0000", "bushing-0000"]
    assert len(info["codes"][0]["shape"]) == 6 and len(info["codes"][0]["appearance"]) == 7
    assert info["config"]["training"]["steps"] == 30
    assert info["sizes"]["network_parameters"] > 0
    assert info["metrics"]["fit"]["per_asset"].keys() == {"washer-0000", "bushing-0000"}


def test_train_config_errors_are_one_line(trained, tmp_path):
    _, _, env, _ = trained
    bad = tmp_path / "bad.toml"
    bad.write_text(TINY_TOML.replace("steps = 30", "steps = -3"))
    proc = _cli("train", str(bad), "--out", str(tmp_path / "x.safetensors"), env=env)
    assert proc.returncode == 2
    assert proc.stderr.strip() == (f"genfield: error: {bad}:15: training.steps: must be >= 1, "
                                   "got -3")


def test_list_families_needs_no_config(trained):
    _, _, env, _ = trained
    proc = _cli("train", "--list-families", env=env)
    assert proc.returncode == 0 and "washer" in proc.stdout and "bottle" in proc.stdout


def test_fit_adds_a_named_code_from_a_mesh(trained, tmp_path):
    import trimesh
    from skimage.measure import marching_cubes

    from genfield.assets import make_builtin
    from genfield.field.grid import grid_points

    _, out, env, _ = trained
    # a held-out washer (index 5 was never trained on) written as a mesh file
    asset = make_builtin("washer", 5)
    occ = asset.occupancy(grid_points(48).reshape(-1, 3)).reshape(48, 48, 48)
    verts, faces, _, _ = marching_cubes(np.pad(occ, 1), 0.5, spacing=(2 / 47,) * 3)
    mesh_path = tmp_path / "washer.ply"
    trimesh.Trimesh(verts - (1 + 2 / 47), faces[:, ::-1]).export(mesh_path)
    fitted = tmp_path / "fitted.safetensors"
    proc = _cli("fit", str(out), str(mesh_path), "--name", "my-washer", "--out", str(fitted),
                "--steps", "20", "--samples", "8192", "--quiet", env=env)
    assert proc.returncode == 0, proc.stderr
    assert "my-washer fitted in" in proc.stdout
    info = json.loads(_cli("inspect", str(fitted), "--json", env=env).stdout)
    assert [c["name"] for c in info["codes"]][-1] == "my-washer"
    assert info["codes"][-1]["family"] == "mesh"
    assert info["codes"][-1]["source"].endswith("washer.ply")
    assert "my-washer" in info["metrics"]["fitted"]
    again = _cli("fit", str(fitted), str(mesh_path), "--name", "my-washer", "--out",
                 str(tmp_path / "x.safetensors"), env=env)
    assert again.returncode == 2 and "already has a code named" in again.stderr
