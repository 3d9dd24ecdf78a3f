"""Fit a shape and appearance code for a new mesh, with the network frozen."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("model", help="model file")
    p.add_argument("mesh", help="mesh file (OBJ, PLY, STL, glTF/GLB)")
    p.add_argument("--name", required=True, help="name to store the new code under")
    p.add_argument("--out", required=True, help="model file to write")


def run(args: argparse.Namespace) -> int:
    raise not_built("fit", "issue: the generative feature field")
