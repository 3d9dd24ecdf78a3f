"""Join dataset shard folders into one dataset."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("shards", nargs="+", help="shard folders")
    p.add_argument("--out", required=True, help="merged dataset folder")


def run(args: argparse.Namespace) -> int:
    raise not_built("merge", "issue: labelled dataset generation")
