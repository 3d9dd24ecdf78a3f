"""Parse and check a recipe; print a summary, or the first concrete scenes."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("recipe", help="recipe file")
    p.add_argument("--model", help="model file whose code names the recipe may use")


def run(args: argparse.Namespace) -> int:
    raise not_built("check", "issue: the scene recipe language")
