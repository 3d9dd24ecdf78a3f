"""Writing files so that none is ever half there: temp name, then rename; and their hashes.

A file under its final name is always complete: it is written to ``.<name>.<pid>.partial``
beside its target and renamed over it (``os.replace`` is atomic within one file system,
POSIX rename(2)). A kill at any moment leaves at worst a temp file, which ``remove_temps``
clears. A write error (a full disk, a read-only folder) removes the temp file and becomes
one clear DatasetError.

Image files are not fsynced one by one (about 5 ms each here, more than encoding them):
against a power cut, every file's sha256 is in its record and --resume checks them all;
``sync_all`` flushes everything once before a manifest says "complete", which is fsynced.
"""

from __future__ import annotations

import errno
import hashlib
import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from genfield.dataset.layout import FOLDERS, RECORDS, TEMP_SUFFIX, is_temp
from genfield.errors import DatasetError

_CHUNK = 1 << 20

_REASONS = {
    errno.ENOSPC: "the disk is full",
    errno.EDQUOT: "the disk quota is used up",
    errno.EROFS: "the file system is read-only",
    errno.EACCES: "permission denied",
}


def write_error(path: Path, err: OSError) -> DatasetError:
    """A DatasetError that says which file could not be written and why."""
    reason = _REASONS.get(err.errno or 0, err.strerror or str(err))
    return DatasetError(
        f"could not write {path.name}: {reason}; nothing half-written was kept",
        where=str(path),
        hint="mend the cause and rerun with --resume: the images already written are kept",
    )


class _HashingWriter:
    """A binary file handle that hashes what goes through it."""

    def __init__(self, handle) -> None:
        self._handle = handle
        self._hash = hashlib.sha256()

    def write(self, data: bytes) -> None:
        self._handle.write(data)
        self._hash.update(data)

    @property
    def sha256(self) -> str:
        return self._hash.hexdigest()


@contextmanager
def atomic_file(path: Path, *, durable: bool = False) -> Iterator[_HashingWriter]:
    """Open ``path`` for writing under a temp name; on a clean exit it is renamed into place.

    The writer's ``sha256`` is the hash of what was written; ``durable`` fsyncs the data
    before the rename. On any error (or interrupt) the temp file is removed and the target
    is left as it was.
    """
    tmp = path.with_name(f".{path.name}.{os.getpid()}{TEMP_SUFFIX}")
    try:
        with open(tmp, "wb") as handle:
            writer = _HashingWriter(handle)
            yield writer
            if durable:
                handle.flush()
                os.fsync(handle.fileno())
        os.replace(tmp, path)
    except OSError as err:
        tmp.unlink(missing_ok=True)
        raise write_error(path, err) from err
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def write_atomic(path: Path, data: bytes) -> str:
    """Write ``data`` to ``path`` atomically; returns its sha256 (hex)."""
    with atomic_file(path) as out:
        out.write(data)
    return out.sha256


def sync_all() -> None:
    """Flush every written file to disk (POSIX sync(2)); a no-op where there is none."""
    if hasattr(os, "sync"):
        os.sync()


def sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def sha256_file(path: Path) -> str | None:
    """The sha256 (hex) of a file, or None when it cannot be read."""
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as handle:
            while chunk := handle.read(_CHUNK):
                digest.update(chunk)
    except OSError:
        return None
    return digest.hexdigest()


def make_folders(root: Path, outputs: tuple[str, ...]) -> None:
    """Create the dataset folder and the sub-folders for ``outputs`` and the records."""
    try:
        for name in (*(FOLDERS[o] for o in outputs), RECORDS):
            (root / name).mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise write_error(root, err) from err


def remove_temps(root: Path) -> int:
    """Delete temp files that interrupted writes left in a dataset folder; returns how many."""
    removed = 0
    for folder in (root, *(root / name for name in (*FOLDERS.values(), RECORDS))):
        if not folder.is_dir():
            continue
        for entry in folder.iterdir():
            if entry.is_file() and is_temp(entry):
                entry.unlink(missing_ok=True)
                removed += 1
    return removed

