"""Records -> ``annotations.json``, ``factors.jsonl`` and the finished ``manifest.json``.

Everything is streamed from the per-image records in index order, a few passes over small
files, so memory stays flat however many images there are. Render and merge both finish a
folder here, which is why a merged set of shards equals a single run byte for byte.
"""

from __future__ import annotations

import json
from collections import Counter
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from genfield.dataset.coco import write_annotations
from genfield.dataset.files import atomic_file, sha256_bytes, sync_all
from genfield.dataset.layout import ANNOTATIONS, FACTORS, record_file
from genfield.dataset.manifest import write_manifest
from genfield.errors import DatasetError


def read_record(root: Path, index: int, count: int) -> tuple[dict[str, Any], bytes]:
    """Image ``index``'s record and its bytes; a DatasetError if it is missing or broken."""
    path = root / record_file(index, count)
    try:
        data = path.read_bytes()
        record = json.loads(data)
    except (OSError, ValueError) as err:
        raise DatasetError(f"record of image {index} cannot be read: {err}", where=str(path),
                           hint="rerun 'genfield render' with --resume to redo it") from None
    return record, data


def assemble(root: Path, head: dict[str, Any], indices: range) -> None:
    """Write the folder's annotations, factors and complete manifest from its records.

    ``head`` is the plan (see genfield.dataset.manifest.plan); ``indices`` the images held.
    """
    count = head["count"]

    def records() -> Iterator[dict[str, Any]]:
        for index in indices:
            yield read_record(root, index, count)[0]

    info = {"description": f"genfield dataset rendered from {head['recipe']['name']}",
            "version": head["genfield_version"]}
    with atomic_file(root / ANNOTATIONS) as ann:
        write_annotations(ann.write, info, tuple(head["classes"]), records)
    splits: Counter[str] = Counter()
    with atomic_file(root / FACTORS) as fac:
        for record in records():
            splits[record["split"]] += 1
            fac.write(json.dumps(record["factors"], sort_keys=True).encode() + b"\n")

    def files() -> Iterator[tuple[str, str]]:
        yield ANNOTATIONS, ann.sha256
        yield FACTORS, fac.sha256
        for index in indices:
            record, data = read_record(root, index, count)
            yield from record["files"].items()
            yield record_file(index, count), sha256_bytes(data)

    finished = {**head, "complete": True, "images": len(indices),
                "split_counts": {name: splits[name] for name in head["splits"]}}
    sync_all()  # every file on disk before the manifest says the folder is complete
    write_manifest(root, finished, files())
