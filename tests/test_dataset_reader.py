"""SceneDataset reads back exactly what was written, in torchvision's detection convention."""

from __future__ import annotations

import json

import numpy as np
import pytest
import torch
from _dataset_doubles import draw, spec, trace

from genfield.dataset import SceneDataset
from genfield.dataset.writer import write_dataset
from genfield.errors import DatasetError

JOB = spec(count=9, objects=4, size=36)


@pytest.fixture(scope="module")
def root(tmp_path_factory):
    out = tmp_path_factory.mktemp("reader") / "ds"
    write_dataset(out, JOB)
    return out


def test_items_equal_the_render_they_came_from(root):
    data = SceneDataset(root)
    assert len(data) == 9
    for k in range(len(data)):
        image, target = data[k]
        index = int(target["image_id"])
        out = trace(draw(json.loads(JOB.recipe_text), JOB.seed, index))
        assert image.dtype == torch.float32 and image.shape == (3, 36, 36)
        assert torch.equal((image * 255).round().to(torch.uint8).permute(1, 2, 0),
                           torch.from_numpy(out.srgb8))
        ids = out.instance_ids
        visible = [oid for oid in out.object_ids if (ids == oid).any()]
        assert target["instance_ids"].tolist() == visible
        for n, oid in enumerate(visible):
            mask = ids == oid
            assert torch.equal(target["masks"][n], torch.from_numpy(mask.astype(np.uint8)))
            rows, cols = np.nonzero(mask)
            # torchvision boxes: (x1, y1, x2, y2), x2/y2 one past the last pixel
            assert target["boxes"][n].tolist() == [cols.min(), rows.min(), cols.max() + 1, rows.max() + 1]
            assert target["area"][n] == mask.sum()
        assert target["labels"].dtype == torch.int64 and target["labels"].min() >= 1
        assert target["masks"].dtype == torch.uint8 and target["boxes"].dtype == torch.float32
        depth = target["depth"].numpy()
        hit = np.isfinite(out.depth)
        assert np.array_equal(np.isfinite(depth), hit)
        assert np.abs(depth[hit] - out.depth[hit]).max() <= 0.0005 + 1e-6
        assert target["normals"].shape == (3, 36, 36)
        assert target["factors"]["index"] == index


def test_splits_partition_the_images(root):
    parts = {s: SceneDataset(root, split=s) for s in ("train", "val", "test")}
    seen = sorted(int(i) for d in parts.values() for i in d.indices)
    assert seen == list(range(9))
    for name, data in parts.items():
        for k in range(len(data)):
            assert data[k][1]["factors"]["split"] == name
    with pytest.raises(DatasetError, match="no split 'valid'"):
        SceneDataset(root, split="valid")


def test_an_unfinished_dataset_is_not_read(tmp_path, monkeypatch):
    def stop(*_a):
        raise KeyboardInterrupt

    monkeypatch.setattr("genfield.dataset.writer.assemble", stop)
    with pytest.raises(KeyboardInterrupt):
        write_dataset(tmp_path / "ds", spec(count=2))
    with pytest.raises(DatasetError, match="not finished"):
        SceneDataset(tmp_path / "ds")


def test_a_torch_dataloader_batches_it(root):
    loader = torch.utils.data.DataLoader(SceneDataset(root, split="train"), batch_size=2,
                                         collate_fn=lambda batch: tuple(zip(*batch, strict=True)))
    images, targets = next(iter(loader))
    assert len(images) == 2 and "boxes" in targets[0]
