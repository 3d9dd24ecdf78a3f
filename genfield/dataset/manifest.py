"""``manifest.json``: what a dataset was made from, whether it is complete, and every file's sha256.

The plan part (genfield version, recipe text and hash, model hash, seed, count, splits,
outputs, classes, shard, encodings) is written when a run starts, with ``complete: false``
and no files; the finished manifest adds the split counts and the sha256 of every other file
in the folder. It holds no time or machine, so the same job gives the same manifest. It is
written atomically, streamed, so its size never sits in memory twice.
"""

from __future__ import annotations

import json
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from genfield import __version__
from genfield.dataset.files import atomic_file
from genfield.dataset.job import JobSpec
from genfield.dataset.layout import (
    DEPTH_MAX_UNITS,
    DEPTH_METRES_PER_UNIT,
    DEPTH_NOTHING,
    MANIFEST,
)
from genfield.errors import DatasetError

FORMAT = "genfield-dataset"
FORMAT_VERSION = 1
SPLIT_RULE = "frac(index * 2654435769 / 2^32) against the cumulative split fractions, in order"

# the plan keys a resume or a merge must find equal
IDENTITY_KEYS = ("format_version", "genfield_version", "recipe", "model", "seed", "count",
                 "splits", "outputs", "amodal_masks", "classes")

ENCODING = {
    "image": "8-bit sRGB PNG (IEC 61966-2-1)",
    "mask": "16-bit grey PNG of instance ids, 0 = background; ids as in factors.jsonl",
    "depth": {"format": "16-bit grey PNG of camera z-depth", "unit": "mm",
              "metres_per_unit": DEPTH_METRES_PER_UNIT, "nothing_hit": DEPTH_NOTHING,
              "saturates_at": DEPTH_MAX_UNITS},
    "normals": "8-bit RGB PNG of world-frame unit normals, c = round(255 (n + 1) / 2), (0,0,0) = none",
}


def plan(spec: JobSpec, shard: tuple[int, int] | None) -> dict[str, Any]:
    """The manifest's description of a job (everything but the file hashes)."""
    return {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "genfield_version": __version__,
        "recipe": {"name": spec.recipe_name, "sha256": spec.recipe_sha256, "text": spec.recipe_text,
                   "includes": dict(spec.recipe_files[1:])},
        "model": {"name": spec.model_name, "sha256": spec.model_sha256},
        "seed": spec.seed,
        "count": spec.count,
        "splits": dict(spec.splits),
        "split_rule": SPLIT_RULE,
        "outputs": list(spec.outputs),
        "amodal_masks": spec.amodal_masks,
        "classes": list(spec.classes),
        "shard": None if shard is None else {"index": shard[0], "of": shard[1]},
        "encoding": {k: v for k, v in ENCODING.items() if k in spec.outputs},
    }


PLAN_KEYS = ("format", "format_version", "genfield_version", "recipe", "model", "seed", "count",
             "splits", "split_rule", "outputs", "amodal_masks", "classes", "shard", "encoding")


def head_of(manifest: dict[str, Any], shard: tuple[int, int] | None) -> dict[str, Any]:
    """The plan part of a manifest, for the given shard (None: the whole dataset)."""
    return {**{k: manifest[k] for k in PLAN_KEYS},
            "shard": None if shard is None else {"index": shard[0], "of": shard[1]}}


def write_manifest(root: Path, head: dict[str, Any], files: Iterable[tuple[str, str]]) -> None:
    """Write ``manifest.json`` atomically and durably: ``head`` (sorted keys), then ``files``
    as it streams."""
    with atomic_file(root / MANIFEST, durable=True) as out:
        text = json.dumps(head, indent=1, sort_keys=True)
        out.write(text[: text.rindex("}")].rstrip().encode() + b',\n "files": {')
        for n, (path, sha) in enumerate(files):
            out.write((b"," if n else b"") + f"\n  {json.dumps(path)}: {json.dumps(sha)}".encode())
        out.write(b"\n }\n}\n")


def read_manifest(root: Path) -> dict[str, Any]:
    """The manifest of a dataset folder; a DatasetError if it is missing or not ours."""
    path = root / MANIFEST
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise DatasetError("no manifest.json: this is not a genfield dataset folder",
                           where=str(root)) from None
    except (OSError, ValueError) as err:
        raise DatasetError(f"manifest.json cannot be read: {err}", where=str(path),
                           hint="rerun 'genfield render' with --force to start the folder afresh") from None
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        raise DatasetError("manifest.json is not a genfield dataset manifest", where=str(path))
    if data.get("format_version") != FORMAT_VERSION:
        raise DatasetError(f"dataset format version {data.get('format_version')} is not "
                           f"{FORMAT_VERSION}, the one this genfield reads", where=str(path))
    return data


def differences(a: dict[str, Any], b: dict[str, Any], keys: tuple[str, ...] = IDENTITY_KEYS) -> list[str]:
    """The identity keys on which two plans differ, with both values, in words."""
    out = []
    for key in keys:
        va, vb = a.get(key), b.get(key)
        if isinstance(va, dict) and "sha256" in va and isinstance(vb, dict):
            va, vb = va.get("sha256"), vb.get("sha256")  # recipe and model: compare by hash
            key = f"{key} sha256"
        if va != vb:
            out.append(f"{key} {short(va)} vs {short(vb)}")
    return out


def short(value: Any) -> str:
    text = json.dumps(value)
    return text if len(text) <= 40 else text[:16] + "..."
