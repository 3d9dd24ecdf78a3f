"""Dataset folders: writer, annotation formats, factors, manifest, resume, shards, reader.

``write_dataset`` renders a job into a folder, ``merge_shards`` joins shard folders and
``SceneDataset`` reads one back for training; they load lazily so that importing the
package does not import torch.
"""

from __future__ import annotations

from genfield.lazy import lazy_getattr

_PUBLIC = {
    "JobSpec": "genfield.dataset.job",
    "job_from_recipe": "genfield.dataset.job",
    "write_dataset": "genfield.dataset.writer",
    "merge_shards": "genfield.dataset.merge",
    "SceneDataset": "genfield.dataset.reader",
}

__all__ = list(_PUBLIC)


__getattr__ = lazy_getattr(__name__, _PUBLIC)
