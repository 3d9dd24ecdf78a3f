"""One rendered scene -> the bytes of its files and its label record (what a worker returns).

This is pure: the same scene and render give the same bytes wherever it runs, which is what
makes a dataset identical whatever the workers, shards or order. The writer only puts the
bytes in place.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from genfield.dataset.coco import annotation
from genfield.dataset.factors import image_factors
from genfield.dataset.files import sha256_bytes
from genfield.dataset.layout import image_file
from genfield.dataset.pngs import depth_to_units, encode_png, normals_to_rgb8
from genfield.render.output import RenderOutput
from genfield.scene import Scene


@dataclass(frozen=True)
class ImageResult:
    """Everything image ``index`` puts in a dataset folder.

    files: (relative path, PNG bytes) in the order they are written; record: the JSON bytes
    of ``records/<index>.json``, which lists the files' sha256 and is written after them.
    """

    index: int
    files: tuple[tuple[str, bytes], ...]
    record: bytes


def label_image(scene: Scene, output: RenderOutput, *, count: int, split: str,
                classes: tuple[str, ...], outputs: tuple[str, ...],
                amodal_masks: bool = False) -> ImageResult:
    """Encode one render: PNGs for ``outputs``, COCO annotations of visible objects, factors
    (with each object's amodal mask as RLE when ``amodal_masks``).

    Objects whose class is not among ``classes`` are a bug upstream (the recipe checks
    classes), so they raise ValueError rather than being dropped.
    """
    ids = output.instance_ids  # (H, W) uint16, 0 = background
    arrays = {
        "image": lambda: output.srgb8,  # (H, W, 3) uint8
        "mask": lambda: ids,
        "depth": lambda: depth_to_units(output.depth),  # (H, W) uint16 mm
        "normals": lambda: normals_to_rgb8(output.normals),  # (H, W, 3) uint8
    }
    files = tuple((image_file(o, scene.index, count), encode_png(arrays[o]())) for o in outputs)
    category = {name: i for i, name in enumerate(classes, 1)}
    annotations: list[dict[str, Any]] = []
    for obj in scene.objects:
        if obj.label not in category:
            raise ValueError(f"object {obj.id} has class {obj.label!r}, not one of {classes}")
        ann = annotation(ids == obj.id, category[obj.label], obj.id)
        if ann is not None:  # wholly hidden objects stay in the factors only
            annotations.append(ann)
    h, w = ids.shape
    record = {
        "index": scene.index,
        "split": split,
        "files": {path: sha256_bytes(data) for path, data in files},
        "image": {"id": scene.index, "file_name": image_file("image", scene.index, count),
                  "width": int(w), "height": int(h)},
        "annotations": annotations,
        "factors": image_factors(scene, output, ids, split, amodal_masks=amodal_masks),
    }
    return ImageResult(scene.index, files, json.dumps(record, sort_keys=True).encode())
