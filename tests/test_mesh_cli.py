"""``genfield mesh`` end to end on a real model file whose network is set by hand.

The network's weights make its surface known in closed form: the trunk's six ReLU units are
the half-spaces +-x_i > r of a cube (r = the one-number shape code), the logit is
c - k * (their sum), so the 0.5 level is the cube of half-size r + c / k (with its edges cut
by the same amount); the colour head passes the appearance code a through, albedo = sigmoid(a - 2).
"""

from __future__ import annotations

import numpy as np
import pytest
import torch
import trimesh

from genfield import cli
from genfield.assets import make_builtin
from genfield.colour import to_srgb8
from genfield.field.codebook import CodeBook
from genfield.field.config import NetworkConfig, SourcesConfig, TrainConfig
from genfield.field.model import Model
from genfield.field.network import FieldNetwork

C, K = 4.0, 100.0  # logit inside, and its slope outside: faces sit c / k = 0.04 out


def sigmoid(x):
    return 1.0 / (1.0 + np.exp(-np.asarray(x, dtype=np.float64)))


@pytest.fixture(scope="module")
def model_file(tmp_path_factory):
    cfg = TrainConfig(sources=SourcesConfig(families={"cup": 1, "washer": 2}),
                      network=NetworkConfig(shape_dim=1, appearance_dim=3, octaves=0, width=6,
                                            depth=1, feature_dim=1, colour_width=4,
                                            colour_depth=1, colour_harmonics=0))
    net = FieldNetwork(cfg.network)
    with torch.no_grad():
        for p in net.parameters():
            p.zero_()
        first = net.trunk[0].weight  # (6, 3 + 1): x columns, then the shape code
        for i in range(3):
            first[2 * i, i], first[2 * i + 1, i] = 1.0, -1.0
        first[:, 3] = -1.0  # relu(+-x_i - r)
        net.geometry_out.weight[0, :] = -K
        net.geometry_out.bias[0] = C
        net.colour[0].weight[:3, -3:] = torch.eye(3)  # relu(a): the code's columns come last
        net.colour_out.weight[:, :3] = torch.eye(3)
        net.colour_out.bias[:] = -2.0
    book = CodeBook(
        names=("cup-0000", "washer-0001"), families=("cup", "washer"),
        shape=np.array([[0.5], [0.3]], np.float32),
        appearance=np.array([[2.0, 0.0, 4.0], [0.0, 4.0, 2.0]], np.float32),
        prior_weights=np.array([1.0]), prior_means=np.array([[0.4, 1.0, 1.0, 1.0]]),
        prior_chols=0.01 * np.eye(4)[None],
    )
    model = Model(config=cfg, network=net, codebook=book,
                  sources=("builtin:cup:seed=0:index=0", "builtin:washer:seed=0:index=1"))
    path = tmp_path_factory.mktemp("model") / "cubes.gfm"
    model.save(path)
    return path


def mesh_cli(*args: str) -> int:
    return cli.main(["mesh", "--resolution", "64", "--coarse", "16", "--threads", "1", *args])


@pytest.mark.parametrize("suffix", [".ply", ".glb", ".obj"])
def test_named_code_to_each_format(model_file, tmp_path, suffix, capsys):
    out = tmp_path / f"cube{suffix}"
    assert mesh_cli(str(model_file), "--shape", "cup-0000", "--out", str(out)) == 0
    assert "faces in object units" in capsys.readouterr().out
    mesh = trimesh.load(out, force="mesh", process=False)
    half = 0.5 + C / K
    assert np.allclose(mesh.bounds, [[-half] * 3, [half] * 3], atol=0.005)
    assert mesh.is_watertight
    linear = sigmoid(np.array([2.0, 0.0, 4.0]) - 2.0)
    expected = np.round(linear * 255) if suffix == ".glb" else to_srgb8(linear)
    assert np.allclose(mesh.visual.vertex_colors[:, :3], expected, atol=1)


def test_real_size_uses_the_training_assets_metres(model_file, tmp_path, capsys):
    out = tmp_path / "cube.ply"
    assert mesh_cli(str(model_file), "--shape", '"washer-0001"', "--appearance", "cup-0000",
                    "--real-size", "--out", str(out)) == 0
    metres = make_builtin("washer", 1).metric_half_extent
    mesh = trimesh.load(out, process=False)
    assert mesh.bounds[1] == pytest.approx([(0.3 + C / K) * metres] * 3, rel=0.01)
    assert "as training asset washer-0001" in capsys.readouterr().out
    assert mesh_cli(str(model_file), "--shape", "cup-0000", "--real-size", "0.1",
                    "--out", str(out)) == 0
    assert trimesh.load(out, process=False).bounds[1] == pytest.approx([0.054] * 3, rel=0.01)


def test_prior_draw_keeps_its_shape_and_appearance_together(model_file, tmp_path):
    out = tmp_path / "drawn.ply"
    # temperature 0: the prior's mean, shape 0.4 and appearance (1, 1, 1)
    assert mesh_cli(str(model_file), "--shape", "prior temperature 0", "--out", str(out)) == 0
    mesh = trimesh.load(out, process=False)
    assert mesh.bounds[1] == pytest.approx([0.4 + C / K] * 3, abs=0.005)
    assert np.allclose(mesh.visual.vertex_colors[:, :3], to_srgb8(sigmoid([-1.0] * 3)), atol=1)


def test_lerp_between_named_codes(model_file, tmp_path):
    out = tmp_path / "between.ply"
    assert mesh_cli(str(model_file), "--shape", 'lerp ["cup-0000": 1, "washer-0001": 1]',
                    "--appearance", "washer-0001", "--out", str(out)) == 0
    assert trimesh.load(out, process=False).bounds[1] == pytest.approx([0.44] * 3, abs=0.005)


@pytest.mark.parametrize("args, words", [
    (["--shape", "cupp-0000"], "did you mean"),
    (["--shape", "prior temperature"], "--shape:1:"),
    (["--shape", "cup-0000", "--resolution", "100"], "power of two"),
    (["--shape", "cup-0000", "--floor"], "--index"),
    ([], "--shape EXPR"),
    (["--shape", "cup-0000", "--real-size", "-1"], "metres > 0"),
])
def test_bad_input_is_one_error_and_exit_2(model_file, tmp_path, capsys, args, words):
    out = tmp_path / "x.ply"
    assert mesh_cli(str(model_file), *args, "--out", str(out)) == 2
    err = capsys.readouterr().err
    assert err.startswith("genfield: error: ") and words in err.splitlines()[0]
    assert not out.exists()


def test_missing_model_file_is_reported(tmp_path, capsys):
    assert mesh_cli(str(tmp_path / "none.gfm"), "--shape", "a", "--out", str(tmp_path / "x.ply")) == 2
    assert "none.gfm" in capsys.readouterr().err


RECIPE = """model "cubes.gfm"
camera {
  target (0, 0, 0)
  distance 50cm
  elevation 30deg
  azimuth 20deg
}
backdrop {
  floor #808080
}
object crate {
  count 2
  asset "cup-0000"
  scale 4cm
  yaw 0deg..90deg
  on floor
  inside (-20cm, -20cm)..(20cm, 20cm)
}
"""


def test_whole_scene_as_one_glb(model_file, tmp_path, capsys):
    from genfield.recipe import draw_scene, load_recipe

    recipe_path = model_file.parent / "crates.gfr"
    recipe_path.write_text(RECIPE, encoding="utf-8")
    out = tmp_path / "scene.glb"
    assert mesh_cli(str(recipe_path), "--index", "3", "--seed", "5", "--floor", "--out", str(out)) == 0
    scene = draw_scene(load_recipe(recipe_path), None, 5, 3)  # poses need no codes
    back = trimesh.load(out)
    assert set(back.graph.nodes_geometry) == {"1-crate", "2-crate", "floor"}
    for obj in scene.objects:
        transform, _ = back.graph.get(f"{obj.id}-{obj.label}")
        assert np.allclose(transform, obj.pose.object_to_world(), atol=1e-6)
    world = back.to_geometry()
    assert world.bounds[0][2] == pytest.approx(0.0, abs=1e-6)  # on the floor (the floor is z = 0)
    assert "3 nodes" in capsys.readouterr().out


def test_scene_flags_are_refused_with_a_code_pair(model_file, tmp_path, capsys):
    recipe_path = model_file.parent / "crates.gfr"
    recipe_path.write_text(RECIPE, encoding="utf-8")
    assert mesh_cli(str(recipe_path), "--index", "0", "--shape", "cup-0000",
                    "--out", str(tmp_path / "s.glb")) == 2
    assert mesh_cli(str(recipe_path), "--index", "0", "--out", str(tmp_path / "s.ply")) == 2
    assert mesh_cli(str(recipe_path), "--out", str(tmp_path / "s.glb")) == 2
    assert "--index" in capsys.readouterr().err.splitlines()[-1]
