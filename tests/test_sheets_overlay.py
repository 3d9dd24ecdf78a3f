"""Label overlays: boxes against pycocotools, tints, outlines, the depth thumbnail."""

from __future__ import annotations

import numpy as np
import pytest
from pycocotools import mask as coco_mask

from genfield.sheets.overlay import (
    NO_HIT,
    Box,
    depth_colours,
    depth_thumbnail,
    draw_boxes,
    instance_colour,
    label_overlay,
    labelled_tile,
    mask_boxes,
    outline_masks,
    tint_masks,
)


def _scene_ids() -> np.ndarray:
    ids = np.zeros((48, 64), np.uint16)
    ids[5:25, 8:30] = 1
    ids[20:40, 25:60] = 2  # overlaps and hides part of 1
    ids[44:46, 2:3] = 3
    return ids


def test_boxes_equal_pycocotools_tobbox():
    ids = _scene_ids()
    boxes = mask_boxes(ids)
    assert sorted(boxes) == [1, 2, 3]
    for oid, box in boxes.items():
        # pycocotools (the COCO API) computes [x, y, w, h] from an RLE of the mask
        rle = coco_mask.encode(np.asfortranarray((ids == oid).astype(np.uint8)))
        assert np.allclose(coco_mask.toBbox(rle), box.xywh), oid
    assert boxes[3] == Box(2, 44, 3, 46)


def test_tint_moves_instance_pixels_towards_their_colour_only():
    image = np.full((48, 64, 3), 100, np.uint8)
    ids = _scene_ids()
    out = tint_masks(image, ids, strength=0.5)
    assert np.array_equal(out[ids == 0], image[ids == 0])
    for oid in (1, 2):
        expect = np.round(0.5 * 100 + 0.5 * np.array(instance_colour(oid))).astype(np.uint8)
        assert (out[ids == oid] == expect).all()
    assert np.array_equal(tint_masks(image, ids, 0.0), image)
    with pytest.raises(ValueError):
        tint_masks(image, ids, 1.5)


def test_outline_of_a_square_is_its_inner_ring():
    image = np.zeros((20, 20, 3), np.uint8)
    ids = np.zeros((20, 20), np.int32)
    ids[5:15, 5:15] = 7
    out = outline_masks(image, ids)
    changed = (out != 0).any(axis=2)
    # a 10 x 10 square has 4 * 10 - 4 = 36 pixels on its inner boundary
    assert changed.sum() == 36
    assert not changed[6:14, 6:14].any()
    assert (out[5, 5:15] == instance_colour(7)).all()


def test_instance_colours_are_distinct():
    colours = {instance_colour(i) for i in range(1, 33)}
    assert len(colours) == 32


def test_boxes_are_drawn_with_their_class_tags():
    image = np.full((60, 80, 3), 255, np.uint8)
    out = draw_boxes(image, {4: Box(20, 30, 50, 55)}, {4: "bracket"})
    colour = np.array(instance_colour(4), np.uint8)
    assert (out[54, 20:50] == colour).all() and (out[30:55, 49] == colour).all()
    tag = out[15:30, 20:50]  # the name sits on a tag above the box
    assert (tag == colour).all(axis=2).sum() > 50
    assert (tag.astype(int).sum(axis=2) < 200).sum() > 10  # dark glyph pixels of the name
    assert np.array_equal(out[31:54, 21:49], image[31:54, 21:49])  # inside untouched


def test_label_overlay_styles():
    image = np.full((48, 64, 3), 128, np.uint8)
    ids = _scene_ids()
    names = {1: "cup", 2: "bowl", 3: "nut"}
    tinted = label_overlay(image, ids, names, style="tint")
    outlined = label_overlay(image, ids, names, style="outline")
    assert tinted.shape == outlined.shape == image.shape
    assert not np.array_equal(tinted, outlined)
    with pytest.raises(ValueError, match="style"):
        label_overlay(image, ids, names, style="glow")


def test_depth_colours_lighten_towards_the_camera():
    depth = np.linspace(1.0, 3.0, 50)[None, :].repeat(2, axis=0)
    rgb = depth_colours(depth, 1.0, 3.0).astype(float)
    luma = rgb @ np.array([0.2126, 0.7152, 0.0722])  # Rec. 709 luma weights
    assert (np.diff(luma[0]) < 0).all()
    nohit = depth_colours(np.array([[np.inf, np.nan]]), 0.0, 1.0)
    assert (nohit == np.array(NO_HIT, np.uint8)).all()


def test_depth_thumbnail_size_and_scale_bar():
    depth = np.full((64, 96), np.inf, np.float32)
    depth[10:50, 20:70] = np.linspace(1.2, 2.4, 50)[None, :]
    thumb = depth_thumbnail(depth, 48)
    assert thumb.shape[1] == 48 and thumb.shape[0] > 32  # 32 rows of map, then bar and range
    bar = thumb[32 + 2 + 2]
    near, far = depth_colours(np.array([[1.2, 2.4]]), 1.2, 2.4)[0]
    assert np.array_equal(bar[0], near) and np.array_equal(bar[-1], far)
    empty = depth_thumbnail(np.full((8, 8), np.inf), 8)
    assert (empty[:8, :8] == np.array(NO_HIT, np.uint8)).all()


def test_labelled_tile_puts_depth_beside_the_image():
    image = np.full((48, 64, 3), 90, np.uint8)
    depth = np.where(_scene_ids() > 0, 2.0, np.inf)
    tile = labelled_tile(image, _scene_ids(), depth, {1: "a", 2: "b", 3: "c"})
    assert tile.shape == (48, 64 + 2 + 32, 3)
