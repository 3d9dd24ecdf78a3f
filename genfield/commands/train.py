"""Learn a generative feature field over training sources, from a TOML config."""

from __future__ import annotations

import argparse

from genfield.commands import not_built


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("config", nargs="?", help="training config (TOML) or a preset name")
    p.add_argument("--out", help="model file to write (.safetensors)")


def run(args: argparse.Namespace) -> int:
    raise not_built("train", "issue: the generative feature field")
