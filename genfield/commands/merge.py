"""Join dataset shard folders into one dataset.

``genfield merge SHARD... --out DIR`` takes the folders of ``genfield render --shard 0/N``
to ``N-1/N``, all finished and from one recipe, model and seed, checks every file's hash,
and writes one dataset with one annotations file and manifest: the same bytes as rendering
the whole dataset in one run.
"""

from __future__ import annotations

import argparse


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("shards", nargs="+", help="shard folders")
    p.add_argument("--out", required=True, help="merged dataset folder (new or empty)")
    p.add_argument("--force", action="store_true", help="replace the dataset the folder holds")


def run(args: argparse.Namespace) -> int:
    import sys

    from tqdm import tqdm

    from genfield.dataset.merge import merge_shards

    def bar(total: int, done: int) -> tqdm:
        return tqdm(total=total, initial=done, unit="image", desc="merge", file=sys.stderr,
                    dynamic_ncols=True)

    n = merge_shards(args.shards, args.out, force=args.force, progress=bar)
    print(f"{args.out}: {n} images from {len(args.shards)} shards")
    return 0
