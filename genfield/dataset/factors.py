"""The factors line of one image: every number that made it, and what each object looks like.

One JSON object per image in ``factors.jsonl``: index, split, seed, the camera (K,
world-to-camera 4x4, size), light, backdrop, the recipe's named values, and per object its
id, class, shape and appearance codes (numbers and the expression that made them), pose
(object-to-world 4x4, translation, rotation, scale, yaw/pitch/roll in radians), visible and
amodal pixel counts, visible fraction, visible and amodal boxes [x, y, w, h] (null when
empty), the eight corners of its object cube projected into the image, and (when the recipe
asks for the "amodal" output) its amodal mask as COCO RLE.
"""

from __future__ import annotations

import itertools
from dataclasses import asdict
from typing import Any

import numpy as np

from genfield.dataset.coco import box_xywh, rle
from genfield.render.camera import project
from genfield.render.output import RenderOutput
from genfield.scene import Scene, SceneObject

# The object cube's corners, x slowest: (-1,-1,-1), (-1,-1,1), (-1,1,-1), ... (1,1,1).
CUBE_CORNERS = np.array(list(itertools.product((-1.0, 1.0), repeat=3)))  # (8, 3) object frame


def _rows(matrix: np.ndarray) -> list[list[float]]:
    return [[float(v) for v in row] for row in np.asarray(matrix)]


def box_corners(scene: Scene, obj: SceneObject) -> list[list[float]]:
    """(8, 3) rows of (u, v, z): the object cube's corners in pixels and camera depth (metres)."""
    world = CUBE_CORNERS @ (obj.pose.scale * obj.pose.R).T + obj.pose.t  # (8, 3)
    return _rows(project(scene.camera, world))


def camera_factors(scene: Scene) -> dict[str, Any]:
    cam = scene.camera
    return {"K": _rows(cam.K), "world_to_camera": _rows(cam.w2c), "width": cam.width, "height": cam.height}


def object_factors(scene: Scene, obj: SceneObject, visible: np.ndarray,
                   amodal: np.ndarray, amodal_mask: bool = False) -> dict[str, Any]:
    """One object's factors; ``visible`` and ``amodal`` are its (H, W) bool masks, the latter
    stored as COCO RLE under ``amodal_mask`` when asked."""
    yaw, pitch, roll = obj.pose.yaw_pitch_roll
    n_visible, n_amodal = int(visible.sum()), int(amodal.sum())
    extra = {"amodal_mask": rle(amodal)} if amodal_mask else {}
    return {
        "id": obj.id,
        "class": obj.label,
        "shape": {"code": [float(v) for v in obj.shape.vector], "expression": obj.shape.expression},
        "appearance": {"code": [float(v) for v in obj.appearance.vector],
                       "expression": obj.appearance.expression},
        "pose": {
            "object_to_world": _rows(obj.pose.object_to_world()),
            "translation": [float(v) for v in obj.pose.translation],
            "rotation": _rows(obj.pose.R),
            "scale": float(obj.pose.scale),
            "angles": {"yaw": float(yaw), "pitch": float(pitch), "roll": float(roll)},
        },
        "visible_pixels": n_visible,
        "amodal_pixels": n_amodal,
        "visible_fraction": n_visible / n_amodal if n_amodal else 0.0,
        "bbox_visible": box_xywh(visible),
        "bbox_amodal": box_xywh(amodal),
        "box_corners": box_corners(scene, obj),
        **extra,
    }


def image_factors(scene: Scene, output: RenderOutput, ids: np.ndarray, split: str, *,
                  amodal_masks: bool = False) -> dict[str, Any]:
    """The factors line of one rendered scene; ``ids`` is its (H, W) uint16 instance-id map."""
    if output.amodal is None:
        raise ValueError("the dataset writer needs amodal masks; render with them switched on")
    objects = [
        object_factors(scene, obj, ids == obj.id, output.amodal[output.object_ids.index(obj.id)],
                       amodal_masks)
        for obj in scene.objects
    ]
    return {
        "index": scene.index,
        "split": split,
        "seed": scene.seed,
        "camera": camera_factors(scene),
        "light": asdict(scene.light),
        "backdrop": asdict(scene.backdrop),
        "values": scene.values,
        "objects": objects,
    }
