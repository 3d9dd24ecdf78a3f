"""The labels a dataset holds, checked against outside references: pycocotools' COCO API and
RLE codec, the closed-form ray-plane distance, and the pinhole projection."""

from __future__ import annotations

import json

import numpy as np
import pytest
from _dataset_doubles import CLASSES, draw, spec, trace
from pycocotools import mask as mask_utils
from pycocotools.coco import COCO

from genfield.dataset.layout import split_of, split_position
from genfield.dataset.pngs import depth_to_units, read_png, units_to_depth
from genfield.dataset.writer import write_dataset
from genfield.render.camera import pixel_rays

JOB = spec(count=8, objects=4, size=40)


def _scene(index: int):
    return draw(json.loads(JOB.recipe_text), JOB.seed, index)


@pytest.fixture(scope="module")
def dataset(tmp_path_factory):
    root = tmp_path_factory.mktemp("labels") / "ds"
    write_dataset(root, JOB)
    return root


def test_pycocotools_loads_annotations_and_every_rle_matches_the_mask_file(dataset):
    # COCO API (pycocotools, the reference implementation of the COCO format) must load the
    # file; each RLE must decode to exactly the pixels of its instance id in masks/.
    coco = COCO(str(dataset / "annotations.json"))
    assert [c["name"] for c in coco.loadCats(coco.getCatIds())] == list(CLASSES)
    assert len(coco.getImgIds()) == 8
    n = 0
    for image_id in coco.getImgIds():
        info = coco.loadImgs(image_id)[0]
        ids = read_png(dataset / "masks" / f"{image_id:06d}.png")
        assert ids.shape == (info["height"], info["width"])
        anns = coco.loadAnns(coco.getAnnIds(imgIds=image_id))
        assert {a["instance_id"] for a in anns} == set(np.unique(ids)) - {0}
        for ann in anns:
            rle = coco.annToRLE(ann)
            decoded = mask_utils.decode(rle).astype(bool)
            assert np.array_equal(decoded, ids == ann["instance_id"])
            assert ann["area"] == int(mask_utils.area(rle)) == int(decoded.sum())
            assert np.array_equal(mask_utils.toBbox(rle), np.array(ann["bbox"], dtype=float))
            assert ann["iscrowd"] == 0
            n += 1
    assert n > 8  # most objects are seen
    ann_ids = coco.getAnnIds()
    assert sorted(ann_ids) == list(range(1, len(ann_ids) + 1))  # 1-based: 0 is "no match" in COCOeval


def test_hidden_objects_have_no_annotation_but_stay_in_the_factors(tmp_path):
    # Many objects in a small image: some are hidden behind others or out of view.
    job = spec(count=6, objects=9, size=16)
    write_dataset(tmp_path / "ds", job)
    annotations = json.loads((tmp_path / "ds" / "annotations.json").read_text())["annotations"]
    hidden = 0
    for line in (tmp_path / "ds" / "factors.jsonl").read_text().splitlines():
        factors = json.loads(line)
        assert len(factors["objects"]) == 9
        seen = {a["instance_id"] for a in annotations if a["image_id"] == factors["index"]}
        for obj in factors["objects"]:
            assert (obj["id"] in seen) == (obj["visible_pixels"] > 0)
            hidden += obj["visible_pixels"] == 0
    assert hidden > 0


def test_depth_on_floor_pixels_is_the_ray_plane_distance(dataset):
    # Ray-plane intersection (closed form): t = -o_z / d_z for the floor z = 0; the z-depth is
    # t times the ray's camera-z per unit length. PNG holds millimetres: error <= 0.5 mm.
    factors = [json.loads(line) for line in (dataset / "factors.jsonl").read_text().splitlines()]
    checked = 0
    for f in factors:
        scene = _scene(f["index"])
        rays = pixel_rays(scene.camera)
        ids = read_png(dataset / "masks" / f"{f['index']:06d}.png").reshape(-1)
        metres = units_to_depth(read_png(dataset / "depth" / f"{f['index']:06d}.png")).reshape(-1)
        down = rays.directions[:, 2] < 0
        floor = down & (ids == 0)
        t = -rays.origins[floor, 2] / rays.directions[floor, 2]
        assert np.allclose(metres[floor], t * rays.z_per_t[floor], atol=0.0005 + 1e-6)
        assert np.all(np.isinf(metres[~down & (ids == 0)]))  # sky: nothing hit
        checked += floor.sum()
    assert checked > 1000


def test_depth_encoding_rounds_to_millimetres_and_keeps_nothing_apart():
    depth = np.array([[0.0001, 0.0123456, np.inf], [1.2344, 70.0, 0.5]], dtype=np.float32)
    units = depth_to_units(depth)
    assert units.tolist() == [[1, 12, 0], [1234, 65535, 500]]  # a hit is never 0; saturates
    back = units_to_depth(units)
    assert np.isinf(back[0, 2]) and back[1, 2] == pytest.approx(0.5)


def test_boxes_and_box_corners_agree_with_the_projection(dataset):
    # A sphere lies inside its object cube, so its amodal box lies inside the box of the
    # cube's projected corners (pinhole projection, Hartley and Zisserman eq. 6.1).
    for line in (dataset / "factors.jsonl").read_text().splitlines():
        for obj in json.loads(line)["objects"]:
            corners = np.array(obj["box_corners"])  # (8, 3) u, v, z
            assert corners.shape == (8, 3) and np.all(corners[:, 2] > 0)
            if obj["bbox_amodal"] is None:
                continue
            x, y, w, h = obj["bbox_amodal"]
            assert corners[:, 0].min() - 1 <= x and x + w <= corners[:, 0].max() + 1
            assert corners[:, 1].min() - 1 <= y and y + h <= corners[:, 1].max() + 1
            if obj["bbox_visible"] is not None:
                vx, vy, vw, vh = obj["bbox_visible"]
                assert x <= vx and vx + vw <= x + w and y <= vy and vy + vh <= y + h
            assert 0.0 <= obj["visible_fraction"] <= 1.0


def test_factors_hold_codes_expressions_pose_and_camera(dataset):
    first = json.loads((dataset / "factors.jsonl").read_text().splitlines()[0])
    scene = _scene(0)
    assert first["index"] == 0 and first["seed"] == 3
    assert np.allclose(first["camera"]["K"], scene.camera.K)
    assert np.allclose(first["camera"]["world_to_camera"], scene.camera.w2c)
    obj, ref = first["objects"][0], scene.objects[0]
    assert obj["shape"]["code"] == list(ref.shape.vector)
    assert obj["shape"]["expression"] == {"kind": "prior", "temperature": 1.0}
    assert obj["appearance"]["expression"] == {"kind": "named", "name": "colour-0"}
    assert np.allclose(obj["pose"]["object_to_world"], ref.pose.object_to_world())
    assert obj["pose"]["angles"]["yaw"] == ref.pose.yaw_pitch_roll[0]


def test_mask_pixels_are_the_exact_first_hits(dataset):
    # The double traces spheres exactly: the mask file must be its nearest-sphere map.
    scene = _scene(5)
    out = trace(scene)
    assert np.array_equal(read_png(dataset / "masks" / "000005.png"), out.instance_ids)
    assert np.array_equal(read_png(dataset / "images" / "000005.png"), out.srgb8)


def test_split_rule_is_deterministic_and_meets_the_fractions():
    fractions = (("train", 0.7), ("val", 0.2), ("test", 0.1))
    names = [split_of(i, fractions) for i in range(5000)]
    for name, f in fractions:
        assert abs(names.count(name) / 5000 - f) < 0.005  # a Weyl sequence is equidistributed
        assert abs(names[:200].count(name) / 200 - f) < 0.03  # and so is every prefix
    assert split_position(0) == 0.0 and 0.0 <= split_position(10**12) < 1.0
    assert [split_of(i, fractions) for i in range(50)] == names[:50]


def test_amodal_masks_are_stored_as_rle_when_asked(tmp_path):
    from dataclasses import replace

    job = replace(spec(count=2, objects=5, size=24), amodal_masks=True)
    write_dataset(tmp_path / "ds", job)
    for line in (tmp_path / "ds" / "factors.jsonl").read_text().splitlines():
        factors = json.loads(line)
        out = trace(draw(json.loads(job.recipe_text), job.seed, factors["index"]))
        for k, obj in enumerate(factors["objects"]):
            rle = {**obj["amodal_mask"], "counts": obj["amodal_mask"]["counts"].encode()}
            assert np.array_equal(mask_utils.decode(rle).astype(bool), out.amodal[k])
            assert obj["amodal_pixels"] == int(out.amodal[k].sum())
