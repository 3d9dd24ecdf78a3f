"""Dataset folders: writer, annotation formats, factors, manifest, resume, shards, reader.

``write_dataset`` renders a job into a folder, ``merge_shards`` joins shard folders and
``SceneDataset`` reads one back for training; they load lazily so that importing the
package does not import torch.
"""

from __future__ import annotations

import importlib
from typing import Any

_NAMES = {
    "JobSpec": "genfield.dataset.job",
    "job_from_recipe": "genfield.dataset.job",
    "write_dataset": "genfield.dataset.writer",
    "merge_shards": "genfield.dataset.merge",
    "SceneDataset": "genfield.dataset.reader",
}

__all__ = list(_NAMES)


def __getattr__(name: str) -> Any:
    if name in _NAMES:
        return getattr(importlib.import_module(_NAMES[name]), name)
    raise AttributeError(f"module 'genfield.dataset' has no attribute {name!r}")
