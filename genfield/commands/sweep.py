"""Render a strip or a grid that varies one or two parameters, all else held fixed."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("source", help="recipe or model file")
    p.add_argument("--out", required=True, help="sheet PNG to write")


def run(args: argparse.Namespace) -> int:
    raise not_built("sweep", "issue: sweeps, previews, gallery and the demo")
