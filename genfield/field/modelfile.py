"""The model file: one safetensors file, arrays as tensors, everything else as JSON metadata.

Layout (format version 1, DEVELOPERS.md "Model file"):

    tensors   net.<parameter>            the network's weights (float32)
              codes.shape (n, Ds)        codes.appearance (n, Da)
              prior.weights (C,)         prior.means (C, Ds + Da)   prior.chols (C, D, D)
    metadata  format            "genfield-field"
              format_version    "1"
              genfield_version  the writer's version
              config            TrainConfig as JSON
              names, families, sources   JSON lists, one entry per code row
              prior             JSON: the family of each mixture component, how it was fitted
              metrics           JSON: the figures measured at the end of training
              content_sha256    SHA-256 over every other metadata entry and every tensor

The checksum turns a tampered or damaged file into a clear error instead of wrong renders.
This module is numpy-only (no torch): the recipe checker reads code tables through it.
Never pickle: safetensors stores raw arrays and a JSON header, nothing executable.
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from genfield.errors import ModelFileError

FORMAT_NAME = "genfield-field"
FORMAT_VERSION = 1
# What a model file may be called: .gfm (genfield model) is the name recipes and the demo use;
# .safetensors, which it also is, so that tools made for that format recognise it.
MODEL_SUFFIXES = (".gfm", ".safetensors")
JSON_KEYS = ("config", "names", "families", "sources", "prior", "metrics")


@dataclass(frozen=True)
class ModelFileContents:
    """What a model file holds: arrays by name and the decoded JSON entries."""

    tensors: dict[str, np.ndarray]
    meta: dict[str, Any]  # JSON_KEYS decoded, plus format_version and genfield_version


def _digest(tensors: dict[str, np.ndarray], meta_text: dict[str, str]) -> str:
    h = hashlib.sha256()
    for key in sorted(meta_text):
        h.update(f"meta:{key}={meta_text[key]}\n".encode())
    for name in sorted(tensors):
        a = np.ascontiguousarray(tensors[name])
        h.update(f"tensor:{name}:{a.dtype.str}:{a.shape}\n".encode())
        h.update(a.tobytes())
    return h.hexdigest()


def _canonical_bytes(arrays: dict[str, np.ndarray], text: dict[str, str]) -> bytes:
    """safetensors bytes with the JSON header's keys sorted.

    The library keeps the metadata in a hash map whose order changes from run to run; the
    same model must give the same file, so the header is re-serialised canonically. The
    format (safetensors' README): 8-byte little-endian header length, the JSON header padded
    with spaces to a multiple of 8, then the tensor bytes at the header's offsets.
    """
    from safetensors.numpy import save

    raw = save(arrays, metadata=text)
    n = int.from_bytes(raw[:8], "little")
    header = json.dumps(json.loads(raw[8 : 8 + n]), sort_keys=True, separators=(",", ":"))
    encoded = header.encode("utf-8")
    encoded += b" " * (-len(encoded) % 8)
    return len(encoded).to_bytes(8, "little") + encoded + raw[8 + n :]


def write_verified(path: str | os.PathLike, tensors: dict[str, np.ndarray],
                   text: dict[str, str], format_name: str) -> None:
    """Write arrays and string metadata with the format name and a checksum, atomically
    (temporary name beside the target, then rename). Shared by model files and checkpoints."""
    from genfield import __version__

    text = dict(text, format=format_name, format_version=str(FORMAT_VERSION),
                genfield_version=__version__)
    arrays = {k: np.ascontiguousarray(v) for k, v in tensors.items()}
    text["content_sha256"] = _digest(arrays, text)
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        Path(tmp).write_bytes(_canonical_bytes(arrays, text))
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def read_verified(path: str | os.PathLike, format_name: str,
                  what: str) -> tuple[dict[str, np.ndarray], dict[str, str]]:
    """Read and verify a file written by ``write_verified``; problems are ModelFileErrors.

    Returns the arrays and the string metadata (checksum removed, format_version checked).
    """
    from safetensors import SafetensorError, safe_open

    where = str(path)
    if not Path(path).is_file():
        raise ModelFileError(f"{what} not found", where=where)
    try:
        with safe_open(str(path), framework="np") as f:
            text = dict(f.metadata() or {})
            tensors = {k: f.get_tensor(k) for k in f.keys()}  # noqa: SIM118 (not a dict)
    except (SafetensorError, OSError, ValueError) as err:
        raise ModelFileError(f"not a readable safetensors file ({err}); it may be truncated "
                             f"or not a {what}", where=where) from None
    if text.get("format") != format_name:
        raise ModelFileError(f"a safetensors file, but not a genfield {what}", where=where)
    try:
        version = int(text.get("format_version", ""))
    except ValueError:
        raise ModelFileError(f"bad format_version {text.get('format_version')!r}",
                             where=where) from None
    if version > FORMAT_VERSION:
        raise ModelFileError(
            f"written by a newer genfield ({text.get('genfield_version', '?')}, format "
            f"{version}); this genfield reads format {FORMAT_VERSION} and older",
            where=where, hint="upgrade genfield to read it")
    stored = text.pop("content_sha256", None)
    if stored != _digest(tensors, text):
        raise ModelFileError("contents do not match the file's checksum: the file was changed "
                             "or damaged after it was written", where=where,
                             hint="use an intact copy")
    return tensors, text


def write_model_file(path: str | os.PathLike, tensors: dict[str, np.ndarray],
                     meta: dict[str, Any]) -> None:
    """Write a model file; ``meta`` holds the JSON_KEYS entries."""
    missing = [k for k in JSON_KEYS if k not in meta]
    if missing:
        raise ValueError(f"model metadata lacks {missing}")
    text = {k: json.dumps(meta[k], sort_keys=True) for k in JSON_KEYS}
    write_verified(path, tensors, text, FORMAT_NAME)


def read_model_file(path: str | os.PathLike) -> ModelFileContents:
    """Read and verify a model file; any problem is a ModelFileError naming the file."""
    tensors, text = read_verified(path, FORMAT_NAME, "model file")
    meta: dict[str, Any] = {"format_version": int(text["format_version"]),
                            "genfield_version": text.get("genfield_version", "")}
    for key in JSON_KEYS:
        try:
            meta[key] = json.loads(text[key])
        except (KeyError, json.JSONDecodeError):
            raise ModelFileError(f"metadata entry {key!r} is missing or not JSON",
                                 where=str(path)) from None
    return ModelFileContents(tensors=tensors, meta=meta)
