"""Export the mesh of a code pair, or of a whole concrete scene of a recipe."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("source", help="model file, or a recipe with --index")
    p.add_argument("--out", required=True, help="output file (.glb, .ply or .obj)")


def run(args: argparse.Namespace) -> int:
    raise not_built("mesh", "issue: meshes of any variant")
