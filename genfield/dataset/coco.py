"""COCO object-detection annotations: one entry per visible object, assembled from the records.

The format is the published COCO one (cocodataset.org, "Data format", object detection):
``images``, ``categories``, ``annotations`` with ``bbox`` [x, y, w, h] in pixels, ``area``,
``segmentation`` as run-length encoding from ``pycocotools.mask.encode``, ``iscrowd`` 0.
Category ids start at 1 and annotation ids at 1: 0 means "background" to torchvision's
detection models and "no match" inside pycocotools' evaluator. Each annotation also carries
``instance_id``, the object's value in ``masks/`` and its id in ``factors.jsonl``.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Iterable
from typing import Any

import numpy as np
from pycocotools import mask as mask_utils

CATEGORY_PARENT = "object"


def box_xywh(mask: np.ndarray) -> list[int] | None:
    """[x, y, w, h] of the pixels set in a (H, W) bool mask (w, h counted in whole pixels), or None."""
    rows = np.flatnonzero(mask.any(axis=1))
    cols = np.flatnonzero(mask.any(axis=0))
    if rows.size == 0:
        return None
    return [int(cols[0]), int(rows[0]), int(cols[-1] - cols[0] + 1), int(rows[-1] - rows[0] + 1)]


def rle(mask: np.ndarray) -> dict[str, Any]:
    """COCO run-length encoding of a (H, W) bool mask, JSON-ready (counts as text)."""
    encoded = mask_utils.encode(np.asfortranarray(mask.astype(np.uint8)))  # column-major, as COCO
    return {"size": [int(v) for v in encoded["size"]], "counts": encoded["counts"].decode("ascii")}


def annotation(mask: np.ndarray, category_id: int, instance_id: int) -> dict[str, Any] | None:
    """One object's annotation (without its dataset-wide id), or None if no pixel is visible."""
    box = box_xywh(mask)
    if box is None:
        return None
    return {
        "category_id": int(category_id),
        "instance_id": int(instance_id),
        "bbox": box,
        "area": int(mask.sum()),
        "segmentation": rle(mask),
        "iscrowd": 0,
    }


def categories(classes: tuple[str, ...]) -> list[dict[str, Any]]:
    """The COCO categories of a recipe's class labels, in their order, ids from 1."""
    return [{"id": i, "name": name, "supercategory": CATEGORY_PARENT} for i, name in enumerate(classes, 1)]


def write_annotations(write: Callable[[bytes], None], info: dict[str, Any],
                      classes: tuple[str, ...], records: Callable[[], Iterable[dict[str, Any]]]) -> None:
    """Stream annotations.json to ``write`` from the per-image records, in index order.

    ``records()`` is called twice (images first, then annotations), so no list of every
    image or annotation is ever held in memory. Annotation ids run from 1 in index order,
    which makes the file the same whether the images came from one run or merged shards.
    """
    head = {"info": info, "licenses": [], "categories": categories(classes)}
    write(json.dumps(head, sort_keys=True)[:-1].encode() + b', "images": [')
    for n, record in enumerate(records()):
        write((b", " if n else b"") + json.dumps(record["image"], sort_keys=True).encode())
    write(b'], "annotations": [')
    next_id = 1
    for record in records():
        for ann in record["annotations"]:
            entry = {**ann, "id": next_id, "image_id": record["image"]["id"]}
            write((b", " if next_id > 1 else b"") + json.dumps(entry, sort_keys=True).encode())
            next_id += 1
    write(b"]}\n")
