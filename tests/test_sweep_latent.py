"""Latent and camera sweeps rendered in the studio, on analytic stand-in fields (no training)."""

from __future__ import annotations

import json

import numpy as np
import pytest
import torch
from PIL import Image
from skimage.transform import rotate

from genfield.sheets.make import latent_sweep, render_all
from genfield.sheets.studio import CodeRange, latent_plan, named_code, studio_scene
from tests._sheet_doubles import BlendModel

torch.set_num_threads(1)


@pytest.fixture(scope="module")
def model() -> BlendModel:
    return BlendModel()


def _solid(out) -> np.ndarray:
    """Pixels fully covered by the object (away from its anti-aliased rim), (H, W) bool."""
    return out.alpha > 0.99


def _mean_colour(out) -> np.ndarray:
    return out.rgb[_solid(out)].mean(axis=0)


def test_appearance_sweep_moves_the_mean_colour_monotonically_from_a_to_b(model):
    plan = latent_plan(model.codebook, CodeRange("brick"), CodeRange("ball", "ring"), steps=6)
    sweep = latent_sweep(model, plan)
    means = np.array([_mean_colour(o) for o in sweep.outputs])  # (6, 3) linear RGB
    direction = model.colour("ring") - model.colour("ball")
    along = means @ direction
    assert (np.diff(along) > 0).all(), along
    # Lambert shading is linear in the albedo, so with the geometry fixed the mean colour of
    # each frame is the same mix of the two ends' means as its albedo is of the two colours.
    w = np.linspace(0, 1, 6)[:, None]
    assert np.allclose(means, (1 - w) * means[0] + w * means[-1], atol=2e-3)
    # the geometry does not move: same pixels covered in every frame
    masks = [o.instance_ids > 0 for o in sweep.outputs]
    assert all(np.array_equal(masks[0], m) for m in masks)


def test_shape_sweep_with_fixed_appearance_keeps_the_colour_distribution(model):
    plan = latent_plan(model.codebook, CodeRange("brick", "pair"), CodeRange("post"), steps=5)
    sweep = latent_sweep(model, plan)
    masks = [o.instance_ids > 0 for o in sweep.outputs]
    assert not np.array_equal(masks[0], masks[-1])  # the shape did change
    # chromaticity r/(r+g+b), g/(r+g+b) in linear RGB does not depend on how brightly a
    # Lambert surface is lit under white light: with one albedo it is one point for any shape.
    target = model.colour("post") / model.colour("post").sum()
    for out in sweep.outputs:
        rgb = out.rgb[_solid(out)].astype(np.float64)
        chroma = rgb / rgb.sum(axis=1, keepdims=True)
        assert np.abs(np.median(chroma, axis=0) - target).max() < 0.01
        assert np.percentile(np.abs(chroma - target).max(axis=1), 90) < 0.02


def test_azimuth_sweep_keeps_mask_area_while_depth_rotates(model):
    # Seen from (almost) straight above, turning the camera about the vertical axis turns the
    # image about its centre: the same silhouette, rotated.
    angles = [0.0, 30.0, 60.0, 90.0]
    book = model.codebook
    scenes = [studio_scene(named_code(book, "shape", "pair"), named_code(book, "appearance", "pair"),
                           azimuth_deg=a, elevation_deg=89.5, size=96) for a in angles]
    outs = render_all(model, scenes, "azimuth")
    areas = np.array([(o.instance_ids > 0).sum() for o in outs])
    assert areas.min() > 500
    assert (np.abs(areas / areas.mean() - 1) < 0.02).all(), areas
    depth0 = np.where(np.isfinite(outs[0].depth), outs[0].depth, 0.0)
    for a, out in zip(angles[1:], outs[1:], strict=True):
        mask = out.instance_ids > 0
        assert (mask ^ (outs[0].instance_ids > 0)).sum() > 0.1 * areas[0]  # it did turn
        # camera azimuth +a turns the view clockwise on screen by a (derivation in
        # DEVELOPERS.md, "Sweeps"); skimage's rotate turns anticlockwise for positive angles.
        turned = rotate(depth0, -a, order=0, preserve_range=True) > 0
        iou = (turned & mask).sum() / (turned | mask).sum()
        assert iou > 0.95, (a, iou)
        both = turned & mask
        expect = rotate(depth0, -a, order=0, preserve_range=True)
        assert np.median(np.abs(expect[both] - out.depth[both])) < 0.01  # metres


def test_sheet_and_frames_of_a_latent_grid(model, tmp_path):
    plan = latent_plan(model.codebook, CodeRange("ball", "brick"), CodeRange("ball", "ring"), steps=2)
    sweep = latent_sweep(model, plan)
    sheet = sweep.sheet()
    assert len(sheet.tiles) == 4
    assert [m.text for m in sheet.marks_of("column")] == ["0.00", "1.00"]
    assert [m.text for m in sheet.marks_of("row")] == ["0.00", "1.00"]
    x0, y0, x1, y1 = sheet.tiles[3]
    assert np.array_equal(sheet.image[y0:y1, x0:x1], sweep.outputs[3].srgb8)
    files = sweep.write_frames(tmp_path / "frames")
    assert sorted(p.name for p in files) == [f"{k:04d}.{e}" for k in range(4) for e in ("json", "png")]
    record = json.loads((tmp_path / "frames" / "0003.json").read_text())
    assert record["factors"] == {"shape_weight": 1.0, "appearance_weight": 1.0}
    assert record["scene"]["objects"][0]["appearance"]["expression"]["names"] == ["ball", "ring"]
    assert np.array_equal(np.asarray(Image.open(tmp_path / "frames" / "0003.png")), sweep.outputs[3].srgb8)
