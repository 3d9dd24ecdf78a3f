"""Show what a model file holds: codes, sources, prior, metrics."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("model", help="model file")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")


def run(args: argparse.Namespace) -> int:
    raise not_built("inspect", "issue: the generative feature field")
