"""Render a recipe into a labelled dataset folder.

``genfield render RECIPE --out DIR`` writes images/, masks/ (16-bit instance ids), depth/
(16-bit millimetres), normals/ when the recipe asks, records/ (one label record an image),
annotations.json (COCO), factors.jsonl and manifest.json. Image i is the same bytes whatever
--workers, --shard or --cluster. A stopped run is finished with --resume; --shard I/N renders
every N-th image (for batch schedulers; join with 'genfield merge'); --cluster renders on a
Dask scheduler (pip install 'genfield[cluster]').
"""

from __future__ import annotations

import argparse


def _shard(text: str) -> tuple[int, int]:
    """``I/N`` -> (I, N), 0 <= I < N."""
    from genfield.errors import UsageError

    i, sep, n = text.partition("/")
    if not (sep and i.isdigit() and n.isdigit()) or not 0 <= int(i) < int(n):
        raise UsageError(f"--shard wants I/N with 0 <= I < N, got {text!r}", hint="e.g. --shard 0/4")
    return int(i), int(n)


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("recipe", help="recipe file")
    p.add_argument("--out", required=True, metavar="DIR", help="dataset folder (new or empty)")
    p.add_argument("--count", type=int, metavar="N", help="images in the dataset (default: the recipe's)")
    p.add_argument("--seed", type=int, metavar="S", help="seed (default: the recipe's)")
    p.add_argument("--model", metavar="MODEL", help="model file instead of the one the recipe names")
    p.add_argument("--workers", type=int, default=1, metavar="K",
                   help="local worker processes, one render thread each (default 1)")
    p.add_argument("--shard", metavar="I/N", help="render only images I, I+N, I+2N, ... (0 <= I < N)")
    p.add_argument("--cluster", metavar="ADDRESS",
                   help="render on the Dask scheduler at ADDRESS, e.g. tcp://host:8786")
    p.add_argument("--resume", action="store_true",
                   help="finish a stopped run in DIR: check every file, redo missing or broken ones")
    p.add_argument("--force", action="store_true", help="replace the dataset DIR holds")


def run(args: argparse.Namespace) -> int:
    import sys
    from pathlib import Path

    from tqdm import tqdm

    from genfield.dataset.job import job_from_recipe
    from genfield.dataset.writer import write_dataset
    from genfield.errors import UsageError

    if args.cluster and args.workers != 1:
        raise UsageError("--workers is for local processes; with --cluster the cluster's workers "
                         "render", hint="drop --workers")
    shard = _shard(args.shard) if args.shard else None
    spec = job_from_recipe(Path(args.recipe), model=args.model, count=args.count, seed=args.seed)

    def bar(total: int, done: int) -> tqdm:
        return tqdm(total=total, initial=done, unit="image", desc="render", file=sys.stderr,
                    dynamic_ncols=True, smoothing=0.1)

    summary = write_dataset(Path(args.out), spec, shard=shard, workers=args.workers,
                            cluster=args.cluster, resume=args.resume, force=args.force, progress=bar)
    rate = summary.rendered / summary.seconds if summary.seconds > 0 else 0.0
    print(f"{args.out}: {summary.images} images ({summary.rendered} rendered, {summary.kept} kept) "
          f"in {summary.seconds:.1f} s, {rate:.2f} images/s")
    return 0
