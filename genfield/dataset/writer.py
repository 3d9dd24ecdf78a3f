"""Write a dataset folder: refuse or prepare the folder, render what is missing, assemble.

The order of writes is what makes a kill at any moment harmless: an image's files go in
first (each atomically), then its record (the commit mark, listing their hashes). A resume
trusts an image only when its record reads and every file it lists has that hash; anything
else is rendered again, to the same bytes. The manifest says ``complete: false`` from the
first write until the last file is assembled.
"""

from __future__ import annotations

import logging
import shutil
import time
from collections.abc import Callable, Iterator
from contextlib import closing
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from genfield.dataset.assemble import assemble, read_record
from genfield.dataset.executors import results
from genfield.dataset.files import (
    make_folders,
    remove_temps,
    sha256_bytes,
    sha256_file,
    write_atomic,
    write_error,
)
from genfield.dataset.job import JobSpec, pipeline_for
from genfield.dataset.labels import ImageResult
from genfield.dataset.layout import image_file, is_temp, own_entries, record_file, shard_indices
from genfield.dataset.manifest import differences, plan, read_manifest, write_manifest
from genfield.errors import DatasetError, UsageError

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class WriteSummary:
    """What a run did."""

    images: int  # images the folder holds for this shard
    rendered: int  # rendered by this run
    kept: int  # found intact by --resume and kept
    seconds: float  # wall time of the rendering loop


def _refuse_foreign(root: Path) -> None:
    foreign = sorted(p.name for p in root.iterdir() if p.name not in own_entries() and not is_temp(p))
    if foreign:
        raise DatasetError(
            f"the folder holds files genfield did not write ({', '.join(foreign[:3])}"
            f"{', ...' if len(foreign) > 3 else ''}), so --force will not delete it",
            where=str(root), hint="choose another folder, or move those files away")


def prepare(root: Path, head: dict, *, resume: bool, force: bool) -> dict:
    """Make ``root`` ready for the job ``head``; returns the old manifest (empty if none).

    An existing non-empty folder needs ``resume`` (same job) or ``force`` (replace it).
    """
    if resume and force:
        raise UsageError("--resume and --force contradict each other", hint="give one of them")
    if root.exists() and not root.is_dir():
        raise DatasetError("the output path exists and is not a folder", where=str(root))
    old: dict = {}
    if root.is_dir() and any(root.iterdir()):
        if resume:
            old = read_manifest(root)
            diff = differences(old, head) + differences(old, head, ("shard",))
            if diff:
                raise DatasetError(
                    f"the folder holds a different job ({'; '.join(diff)}), so it cannot be resumed",
                    where=str(root), hint="give the same recipe, model and options, or use --force")
        elif force:
            _refuse_foreign(root)
            for entry in root.iterdir():
                shutil.rmtree(entry) if entry.is_dir() and not entry.is_symlink() else entry.unlink()
        else:
            raise DatasetError("the output folder is not empty", where=str(root),
                               hint="--resume finishes a stopped run, --force replaces the folder")
    try:  # the folder alone, then at once the manifest saying "not done"
        root.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise write_error(root, err) from err
    write_manifest(root, {**head, "complete": False}, ())
    make_folders(root, tuple(head["outputs"]))
    remove_temps(root)
    return old


def intact(root: Path, index: int, count: int, outputs: tuple[str, ...], known: dict[str, str]) -> bool:
    """True when image ``index``'s record reads, lists exactly its files for ``outputs``, and
    every one of them has the listed hash.

    ``known`` is the previous manifest's file table: a record it lists must match it too.
    """
    if not (root / record_file(index, count)).is_file():
        return False
    try:
        record, data = read_record(root, index, count)
    except DatasetError:
        return False
    expected = known.get(record_file(index, count))
    if expected is not None and sha256_bytes(data) != expected:
        return False
    files = record.get("files") if isinstance(record, dict) else None
    if not isinstance(files, dict) or record.get("index") != index:
        return False
    if set(files) != {image_file(o, index, count) for o in outputs}:
        return False
    return all(sha256_file(root / rel) == sha for rel, sha in files.items())


def store(root: Path, result: ImageResult, count: int) -> None:
    """Put one image's files in place, then its record."""
    for rel, data in result.files:
        write_atomic(root / rel, data)
    write_atomic(root / record_file(result.index, count), result.record)


def write_dataset(root: Path | str, spec: JobSpec, *, shard: tuple[int, int] | None = None,
                  workers: int = 1, cluster: str | None = None, resume: bool = False,
                  force: bool = False, progress: Callable[[int, int], object] | None = None
                  ) -> WriteSummary:
    """Render the job ``spec`` (or one shard of it) into ``root`` and finish the folder.

    Args:
        shard: (i, n), render indices i, i + n, ... (0 <= i < n).
        workers: local processes (1 renders in this process); ignored with ``cluster``.
        cluster: a Dask scheduler address to render on instead.
        resume: finish a stopped run in ``root``; force: replace what ``root`` holds.
        progress: called as progress(total, already_done), returning a bar with
            ``update(n)`` and ``close()`` (a tqdm fits).
    """
    root = Path(root)
    if shard is not None and not (0 <= shard[0] < shard[1]):
        raise UsageError(f"shard {shard[0]}/{shard[1]} does not exist", hint="shards are 0/N to N-1/N")
    if workers < 1:
        raise UsageError(f"--workers must be at least 1, got {workers}")
    head = plan(spec, shard)
    pipeline_for(spec)  # a bad recipe or model fails here, before the folder is touched
    old = prepare(root, head, resume=resume, force=force)
    indices = shard_indices(spec.count, shard)
    known = old.get("files", {}) if resume else {}
    done = np.zeros(len(indices), dtype=bool)  # one byte an image: flat enough at any count
    if resume:
        for k, index in enumerate(indices):
            done[k] = intact(root, index, spec.count, spec.outputs, known)
        log.info("resume: %d of %d images intact, %d to render", done.sum(), len(indices), (~done).sum())
    del known, old

    def todo() -> Iterator[int]:
        for k in np.flatnonzero(~done):
            yield indices[int(k)]

    bar = progress(len(indices), int(done.sum())) if progress else None
    rendered = 0
    start = time.perf_counter()
    try:
        with closing(results(spec, todo(), workers=workers, cluster=cluster)) as stream:
            for result in stream:
                store(root, result, spec.count)
                rendered += 1
                if bar is not None:
                    bar.update(1)
    except KeyboardInterrupt:
        log.info("stopped after %d new images; the folder is consistent: rerun with --resume",
                 rendered)
        raise
    finally:
        if bar is not None:
            bar.close()
    seconds = time.perf_counter() - start
    assemble(root, head, indices)
    return WriteSummary(len(indices), rendered, int(done.sum()), seconds)
