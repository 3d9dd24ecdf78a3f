"""Contact sheet of a recipe's first images with label overlays."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("recipe", help="recipe file")
    p.add_argument("--out", required=True, help="sheet PNG to write")


def run(args: argparse.Namespace) -> int:
    raise not_built("preview", "issue: sweeps, previews, gallery and the demo")
