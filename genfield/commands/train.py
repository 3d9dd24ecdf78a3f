"""Learn a generative feature field over training sources, from a TOML config."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("config", nargs="?", help="training config (TOML) or a preset name")
    p.add_argument("--out", help="model file to write (.safetensors)")
    p.add_argument("--list-families", action="store_true",
                   help="print the built-in part families with their parameters and ranges, and exit")


def run(args: argparse.Namespace) -> int:
    if args.list_families:
        from genfield.assets import describe_families

        print(describe_families())
        return 0
    raise not_built("train", "issue: the generative feature field")
