"""Render a recipe into a labelled dataset folder."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("recipe", help="recipe file")
    p.add_argument("--out", required=True, help="dataset folder")


def run(args: argparse.Namespace) -> int:
    raise not_built("render", "issue: labelled dataset generation")
