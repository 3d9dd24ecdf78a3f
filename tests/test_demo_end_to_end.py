"""``genfield demo`` end to end with the quick preset, and what the trained model then shows.

One real demo run (training the quick preset into a private cache) is shared by every test
here: its dataset must pass the dataset checks (pycocotools, the COCO API's reference
implementation, loads the annotations and every RLE matches the mask files), its sheets and
GLB must be there, and the trained model's latent sweeps must behave: an appearance
interpolation moves the mean colour monotonically from A's towards B's, and a shape sweep
at a fixed appearance keeps the colour distribution close.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import re
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import torch
from PIL import Image
from pycocotools import mask as mask_utils
from pycocotools.coco import COCO
from scipy.stats import wasserstein_distance

pytestmark = pytest.mark.slow
torch.set_num_threads(2)
COUNT = 8


@dataclass(frozen=True)
class DemoRun:
    out: Path
    cache: Path
    proc: subprocess.CompletedProcess

    @property
    def model(self) -> Path:
        """The model file the demo reported (step 1 prints how it came by it, and where)."""
        (path,) = re.findall(r"^\s+(?:trained the quick preset|reused the cached model): (.+\.gfm)$",
                             self.proc.stdout, flags=re.MULTILINE)
        return Path(path)


def _cli(*args: str, env: dict | None = None, timeout: int = 600) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "genfield", *args], capture_output=True,
                          text=True, timeout=timeout, env=env)


@pytest.fixture(scope="module")
def demo(tmp_path_factory) -> DemoRun:
    cache = tmp_path_factory.mktemp("cache")
    out = tmp_path_factory.mktemp("demo") / "out"
    env = {**os.environ, "GENFIELD_CACHE": str(cache)}
    proc = _cli("demo", "--out", str(out), "--count", str(COUNT), env=env, timeout=1200)
    assert proc.returncode == 0, proc.stdout[-3000:] + proc.stderr[-3000:]
    return DemoRun(out, cache, proc)


@pytest.fixture(scope="module")
def model(demo):
    from genfield.field.model import load_model

    return load_model(demo.model)


def test_demo_reports_every_step_and_every_file(demo):
    text = demo.proc.stdout
    for k in range(1, 7):
        assert f"[{k}/6]" in text
    assert "trained the quick preset" in text
    for name in ("dataset", "preview.png", "sweep-1.png", "latent-sweep.png", "scene.glb"):
        assert (demo.out / name).exists(), name
        assert str(demo.out / name) in text
    assert "What to try next:" in text
    assert "render" in demo.proc.stderr  # the progress bars went to stderr


def test_demo_dataset_passes_the_dataset_checks(demo):
    from genfield.dataset.layout import image_file
    from genfield.dataset.pngs import read_png

    root = demo.out / "dataset"
    with contextlib.redirect_stdout(io.StringIO()):
        coco = COCO(str(root / "annotations.json"))
    assert len(coco.getImgIds()) == COUNT
    n = 0
    for image_id in coco.getImgIds():
        info = coco.loadImgs(image_id)[0]
        ids = read_png(root / image_file("mask", image_id, COUNT))
        assert ids.shape == (info["height"], info["width"])
        assert (root / image_file("image", image_id, COUNT)).is_file()
        assert (root / image_file("depth", image_id, COUNT)).is_file()
        for ann in coco.loadAnns(coco.getAnnIds(imgIds=image_id)):
            rle = coco.annToRLE(ann)
            decoded = mask_utils.decode(rle).astype(bool)
            assert np.array_equal(decoded, ids == ann["instance_id"])
            assert ann["area"] == int(decoded.sum())
            assert np.array_equal(mask_utils.toBbox(rle), np.array(ann["bbox"], dtype=float))
            n += 1
    assert n >= COUNT  # at least one visible object an image on average
    factors = (root / "factors.jsonl").read_text().splitlines()
    assert len(factors) == COUNT
    manifest = json.loads((root / "manifest.json").read_text())
    assert manifest["count"] == COUNT


def test_demo_sheets_and_scene_mesh(demo):
    import trimesh

    for name in ("preview.png", "sweep-1.png", "latent-sweep.png"):
        with Image.open(demo.out / name) as im:
            assert im.size[0] > 200 and im.size[1] > 100, name
    scene = trimesh.load(demo.out / "scene.glb")
    assert isinstance(scene, trimesh.Scene)
    nodes = [n for n in scene.graph.nodes_geometry if n != "floor"]
    assert nodes and all(n.split("-", 1)[0].isdigit() for n in nodes)


def test_a_second_demo_reuses_the_cached_model(demo, monkeypatch):
    from genfield.commands.demo import cached_model_path, demo_model

    monkeypatch.setenv("GENFIELD_CACHE", str(demo.cache))
    assert cached_model_path() == demo.model  # same key, so nothing is trained below
    path, how = demo_model(None, retrain=False)
    assert path == demo.model and how == "reused the cached model"


def _two_families(model) -> tuple[str, str, str]:
    """(A, A2, B): the two codes of one family whose shapes lie farthest apart, and the code
    whose appearance lies farthest from A's (as the demo's latent sheet picks them)."""
    from genfield.commands.demo import widest_codes

    a, a2, b = widest_codes(model.codebook)
    assert a != a2 and b != a
    return a, a2, b


def test_trained_appearance_sweep_moves_the_mean_colour_from_a_towards_b(model):
    from genfield.sheets.make import latent_sweep
    from genfield.sheets.studio import CodeRange, latent_plan

    a, _, b = _two_families(model)
    sweep = latent_sweep(model, latent_plan(model.codebook, CodeRange(a), CodeRange(a, b), 5))
    mask = sweep.outputs[0].alpha > 0.99  # the shape is fixed: the same pixels in every frame
    assert all(np.array_equal(mask, o.alpha > 0.99) for o in sweep.outputs)
    means = np.array([o.rgb[mask].mean(axis=0) for o in sweep.outputs])  # (5, 3) linear RGB
    along = (means - means[0]) @ (means[-1] - means[0])
    # a network is not linear in its code, so a step may stall: each step may go back at most
    # 5% of the whole way, and the middle frame must have gone a quarter of it
    assert (np.diff(along) > -0.05 * along[-1]).all(), means
    assert along[2] > 0.25 * along[-1], means


def _chroma(out) -> np.ndarray:
    rgb = out.rgb[out.alpha > 0.99].astype(np.float64)
    return rgb / np.maximum(rgb.sum(axis=1, keepdims=True), 1e-6)  # (pixels, 3)


def test_trained_shape_sweep_at_a_fixed_appearance_keeps_the_colour_distribution(model):
    from genfield.sheets.make import latent_sweep, render_all
    from genfield.sheets.studio import CodeRange, latent_plan, named_code, studio_scene

    a, a2, b = _two_families(model)
    sweep = latent_sweep(model, latent_plan(model.codebook, CodeRange(a, a2), CodeRange(a), 4))
    book = model.codebook
    (repainted,) = render_all(model, [studio_scene(named_code(book, "shape", a),
                                                   named_code(book, "appearance", b))], "other")

    def distance(x: np.ndarray, y: np.ndarray) -> float:
        # sum over r, g, b of the 1-D earth mover's distance between chromaticity distributions
        return sum(wasserstein_distance(x[:, c], y[:, c]) for c in range(3))

    base = _chroma(sweep.outputs[0])
    other = distance(base, _chroma(repainted))
    moved = [distance(base, _chroma(o)) for o in sweep.outputs[1:]]
    assert max(moved) < 0.5 * other, (moved, other)


def test_cli_latent_sweep_and_frames(model, demo, tmp_path):
    a, a2, b = _two_families(model)
    proc = _cli("sweep", str(demo.model), "--shape", f"{a}..{a2}", "--appearance", b,
                "--steps", "3", "--out", str(tmp_path / "s.png"), "--frames", str(tmp_path / "f"))
    assert proc.returncode == 0, proc.stderr
    assert (tmp_path / "s.png").is_file()
    record = json.loads((tmp_path / "f" / "0002.json").read_text())
    assert record["factors"]["shape_weight"] == 1.0
    assert record["scene"]["objects"][0]["appearance"]["expression"] == {"kind": "named", "name": b}


def test_cli_recipe_sweep_and_preview(demo, tmp_path):
    from genfield.commands.demo import demo_recipe

    recipe = str(demo_recipe())
    proc = _cli("sweep", recipe, "--model", str(demo.model), "--vary",
                "camera.azimuth=0deg..90deg steps 3", "--out", str(tmp_path / "turn.png"))
    assert proc.returncode == 0, proc.stderr
    proc = _cli("preview", recipe, "--model", str(demo.model), "--count", "2", "--outline",
                "--out", str(tmp_path / "p.png"))
    assert proc.returncode == 0, proc.stderr
    assert (tmp_path / "turn.png").is_file() and (tmp_path / "p.png").is_file()


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--vary", "camera.azimut=0deg..90deg steps 3"], "did you mean 'camera.azimuth'"),
        (["--vary", "camera.azimuth=0deg..90deg"], "a sweep takes fixed values"),
        (["--vary", "camera.azimuth=0deg..90deg steps 3", "--zip"], "--zip pairs"),
        (["--shape", "nothing-here..x"], "no code named 'nothing-here'"),
    ],
)
def test_cli_bad_sweeps_are_one_line_errors(demo, tmp_path, args, message):
    from genfield.commands.demo import demo_recipe

    source = str(demo.model) if "--shape" in args else str(demo_recipe())
    extra = [] if "--shape" in args else ["--model", str(demo.model)]
    proc = _cli("sweep", source, *extra, *args, "--out", str(tmp_path / "x.png"))
    assert proc.returncode == 2, proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("genfield: error: "), proc.stderr
    assert message in lines[0]
