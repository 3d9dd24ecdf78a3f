"""Run the main job end to end on built-in data: train, check, render, preview, sweep, mesh."""

from __future__ import annotations

import argparse


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--out", default="demo-out", help="folder for everything the demo writes")


def run(args: argparse.Namespace) -> int:
    # Placeholder until the issue "Sweeps, previews, gallery and the demo" lands.
    print(
        "genfield demo: the end-to-end demo is not built yet. It will train the quick preset "
        "on the built-in part families, render a demo recipe to a labelled dataset, and write "
        "a preview sheet, a sweep sheet and a scene GLB. For now: 'genfield --help'."
    )
    return 0
