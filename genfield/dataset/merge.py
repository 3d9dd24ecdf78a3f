"""Join shard folders (``genfield render --shard i/n``) into one dataset folder.

Every shard must be complete and made by the same job (recipe, model, seed, count, splits,
outputs, classes, genfield version), and together the shards must be 0/n .. n-1/n, each
once. Each file is copied with its hash checked against the shard's record, and the folder
is finished as a single run would finish it, so the result is byte-identical to rendering
the whole dataset in one go.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from pathlib import Path

from genfield.dataset.assemble import assemble, read_record
from genfield.dataset.files import sha256_bytes, write_atomic
from genfield.dataset.layout import record_file, shard_indices
from genfield.dataset.manifest import differences, head_of, read_manifest
from genfield.dataset.writer import prepare
from genfield.errors import DatasetError, UsageError

log = logging.getLogger(__name__)


def _shard_of(root: Path, manifest: dict) -> tuple[int, int]:
    if not manifest.get("complete"):
        raise DatasetError("this shard is not finished", where=str(root),
                           hint="rerun its 'genfield render ... --shard' with --resume first")
    shard = manifest.get("shard")
    if shard is None:
        raise DatasetError("this folder is a whole dataset, not a shard", where=str(root))
    return int(shard["index"]), int(shard["of"])


def _check_shards(roots: list[Path]) -> tuple[dict, list[tuple[Path, tuple[int, int]]]]:
    """The common plan and each shard's (root, (i, n)); DatasetError on any mismatch."""
    shards, heads = [], []
    for root in roots:
        manifest = read_manifest(root)
        shards.append((root, _shard_of(root, manifest)))
        heads.append(head_of(manifest, None))
    for (root, _), head in zip(shards[1:], heads[1:], strict=True):
        if diff := differences(heads[0], head):
            raise DatasetError(f"this shard comes from a different job than {roots[0]} "
                               f"({'; '.join(diff)})", where=str(root),
                               hint="merge only shards of one recipe, model and seed")
    counts = {n for _, (_, n) in shards}
    if len(counts) != 1:
        raise DatasetError(f"the shards split the dataset differently (into {sorted(counts)} parts)")
    n = counts.pop()
    seen = sorted(i for _, (i, _) in shards)
    if seen != list(range(n)):
        missing = sorted(set(range(n)) - set(seen))
        twice = sorted({i for i in seen if seen.count(i) > 1})
        raise DatasetError(
            f"shards of {n} must each be given once: "
            + (f"missing {', '.join(f'{i}/{n}' for i in missing)}" if missing else "")
            + ("; " if missing and twice else "")
            + (f"given twice {', '.join(f'{i}/{n}' for i in twice)}" if twice else ""))
    return heads[0], shards


def _copy_shard(root: Path, shard: tuple[int, int], out: Path, count: int,
                done: Callable[[], None]) -> None:
    known = read_manifest(root)["files"]
    for index in shard_indices(count, shard):
        record, data = read_record(root, index, count)
        rel_record = record_file(index, count)
        if sha256_bytes(data) != known.get(rel_record):
            raise DatasetError(f"record of image {index} does not match the shard's manifest",
                               where=str(root / rel_record),
                               hint="rerun that shard's 'genfield render' with --resume")
        for rel, sha in record["files"].items():
            try:
                blob = (root / rel).read_bytes()
            except OSError as err:
                raise DatasetError(f"cannot read {rel}: {err.strerror}", where=str(root / rel),
                                   hint="rerun that shard's 'genfield render' with --resume") from None
            if sha256_bytes(blob) != sha:
                raise DatasetError(f"{rel} is corrupt (its sha256 differs from its record's)",
                                   where=str(root / rel),
                                   hint="rerun that shard's 'genfield render' with --resume")
            write_atomic(out / rel, blob)
        write_atomic(out / rel_record, data)
        done()


def merge_shards(roots: list[Path | str], out: Path | str, *, force: bool = False,
                 progress: Callable[[int, int], object] | None = None) -> int:
    """Merge shard folders into ``out``; returns the number of images.

    ``progress`` is called as progress(total, 0) and returns a bar with update/close.
    """
    roots = [Path(r) for r in roots]
    out = Path(out)
    if not roots:
        raise UsageError("give at least one shard folder")
    if any(r.resolve() == out.resolve() for r in roots):
        raise UsageError("the merged folder must not be one of the shards")
    head, shards = _check_shards(roots)
    prepare(out, head, resume=False, force=force)
    count = head["count"]
    bar = progress(count, 0) if progress else None
    try:
        for root, shard in shards:
            _copy_shard(root, shard, out, count, (lambda: bar.update(1)) if bar else (lambda: None))
    finally:
        if bar is not None:
            bar.close()
    assemble(out, head, range(count))
    log.info("merged %d shards into %s", len(shards), out)
    return count
