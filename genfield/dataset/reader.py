"""Read a dataset folder back for training: a torch Dataset in torchvision's detection convention.

Each item is ``(image, target)``: the image a float32 tensor (3, H, W) of sRGB values in
[0, 1] (what torchvision's ``to_tensor`` gives for an 8-bit picture), and the target a dict
with the keys torchvision's detection models and references read (``boxes`` (N, 4) float32
xyxy pixels, ``labels`` (N,) int64 category ids from 1, ``masks`` (N, H, W) uint8,
``image_id``, ``area``, ``iscrowd``) for the N annotated (visible) objects, plus
``instance_ids`` (N,) int64, ``depth`` (H, W) float32 metres (inf where nothing was hit) and
``normals`` (3, H, W) float32 when the folder has them, and ``factors``, the image's line of
factors.jsonl as a dict.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import torch
from pycocotools import mask as mask_utils
from torch.utils.data import Dataset

from genfield.dataset.assemble import read_record
from genfield.dataset.layout import FACTORS, image_file, shard_indices
from genfield.dataset.manifest import read_manifest
from genfield.dataset.pngs import read_png, rgb8_to_normals, units_to_depth
from genfield.errors import DatasetError


def _rle_mask(segmentation: dict[str, Any]) -> np.ndarray:
    """(H, W) uint8 mask of a JSON RLE (counts as text)."""
    rle = {"size": segmentation["size"], "counts": segmentation["counts"].encode("ascii")}
    return mask_utils.decode(rle)


class SceneDataset(Dataset):
    """The images of one split (or all, ``split=None``) of a finished dataset folder.

    Args:
        root: the dataset folder (a whole dataset, a merged one, or one shard).
        split: "train", "val", "test" (the recipe's split names), or None for every image.
    """

    def __init__(self, root: Path | str, split: str | None = None) -> None:
        self.root = Path(root)
        manifest = read_manifest(self.root)
        if not manifest.get("complete"):
            raise DatasetError("the dataset is not finished", where=str(self.root),
                               hint="rerun 'genfield render' with --resume")
        if split is not None and split not in manifest["splits"]:
            raise DatasetError(f"no split {split!r} in this dataset", where=str(self.root),
                               hint=f"choose one of {', '.join(manifest['splits'])}")
        self.split = split
        self.count = int(manifest["count"])
        self.outputs = tuple(manifest["outputs"])
        shard = manifest["shard"]
        held = shard_indices(self.count, None if shard is None else (shard["index"], shard["of"]))
        chosen = []
        with open(self.root / FACTORS, encoding="utf-8") as lines:  # one small dict at a time
            for line in lines:
                factors = json.loads(line)
                if split is None or factors["split"] == split:
                    chosen.append(factors["index"])
        if not set(chosen) <= set(held):
            raise DatasetError("factors.jsonl lists images the manifest does not hold",
                               where=str(self.root / FACTORS))
        self.indices = np.asarray(chosen, dtype=np.int64)  # (len,) image indices in this split

    def __len__(self) -> int:
        return int(self.indices.size)

    def __getitem__(self, item: int) -> tuple[torch.Tensor, dict[str, Any]]:
        index = int(self.indices[item])
        record, _ = read_record(self.root, index, self.count)
        rgb = read_png(self.root / image_file("image", index, self.count))  # (H, W, 3) uint8
        image = torch.tensor(rgb).permute(2, 0, 1).float() / 255.0  # (3, H, W)
        h, w = rgb.shape[:2]
        anns = record["annotations"]
        masks = np.zeros((len(anns), h, w), dtype=np.uint8)  # (N, H, W)
        for k, ann in enumerate(anns):
            masks[k] = _rle_mask(ann["segmentation"])
        boxes = np.array([[x, y, x + bw, y + bh] for x, y, bw, bh in (a["bbox"] for a in anns)],
                         dtype=np.float32).reshape(-1, 4)  # (N, 4) xyxy; x2 = x + w, past the last pixel
        target: dict[str, Any] = {
            "boxes": torch.from_numpy(boxes),
            "labels": torch.tensor([a["category_id"] for a in anns], dtype=torch.int64),
            "masks": torch.from_numpy(masks),
            "image_id": torch.tensor(index, dtype=torch.int64),
            "area": torch.tensor([a["area"] for a in anns], dtype=torch.float32),
            "iscrowd": torch.tensor([a["iscrowd"] for a in anns], dtype=torch.int64),
            "instance_ids": torch.tensor([a["instance_id"] for a in anns], dtype=torch.int64),
            "factors": record["factors"],
        }
        if "depth" in self.outputs:
            units = read_png(self.root / image_file("depth", index, self.count))
            target["depth"] = torch.from_numpy(units_to_depth(units))  # (H, W) metres
        if "normals" in self.outputs:
            rgb_n = read_png(self.root / image_file("normals", index, self.count))
            target["normals"] = torch.from_numpy(rgb8_to_normals(rgb_n)).permute(2, 0, 1)  # (3, H, W)
        return image, target
