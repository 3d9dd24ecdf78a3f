"""The training config: dataclasses with a comment per field, read from TOML and checked.

A config is a TOML file (or a shipped preset, ``quick`` / ``default``) whose tables match the
dataclasses below. Unknown keys, wrong types and impossible values raise a ConfigError naming
the key path and the file's line (``quick.toml:14: training.steps: must be >= 1, got 0``).
The config is stored in every model file beside the weights, so a model rebuilds its network
with no flags.
"""

from __future__ import annotations

import dataclasses
import difflib
import os
import re
import sys
import typing
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from genfield.errors import ConfigError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover (Python 3.10)
    import tomli as tomllib

PRESETS_DIR = Path(__file__).resolve().parent / "presets"


def _num(default: Any, lo: float | None = None, hi: float | None = None, *,
         lo_open: bool = False) -> Any:
    """A numeric field with bounds, checked on load (``lo_open``: the lower bound is excluded)."""
    return field(default=default, metadata={"lo": lo, "hi": hi, "lo_open": lo_open})


@dataclass(frozen=True)
class SourcesConfig:
    """What to train on."""

    families: dict[str, int] = field(default_factory=dict)  # built-in family -> number of assets
    seed: int = _num(0, 0)  # seed of the built-in assets' parameters
    meshes: tuple[str, ...] = ()  # mesh files or globs, relative to the config file
    samples_per_asset: int = _num(200_000, 1_000)  # ground-truth points per asset (cached)


@dataclass(frozen=True)
class NetworkConfig:
    """Sizes of the codes and the network (see DEVELOPERS.md, "The field")."""

    shape_dim: int = _num(32, 1, 512)  # length Ds of a shape code
    appearance_dim: int = _num(20, 1, 512)  # length Da of an appearance code (the first 4
    # entries are the asset's own colour wave when colour_harmonics > 0)
    octaves: int = _num(6, 0, 12)  # frequencies 2^0 .. 2^(L-1) of the positional encoding
    width: int = _num(128, 4, 1024)  # hidden units of each geometry layer
    depth: int = _num(4, 1, 16)  # hidden layers of the geometry trunk
    feature_dim: int = _num(16, 1, 256)  # geometry feature handed to the colour head
    colour_width: int = _num(64, 4, 1024)  # hidden units of each colour layer
    colour_depth: int = _num(2, 1, 16)  # hidden layers of the colour head
    colour_waves: int = _num(16, 0, 256)  # code-steered plane waves fed to the colour head
    colour_harmonics: int = _num(4, 0, 16)  # harmonics of each asset's own wave (0: no own wave)


@dataclass(frozen=True)
class TrainingConfig:
    """The optimisation."""

    steps: int = _num(2000, 1)  # optimiser steps
    seconds: float = _num(0.0, 0.0)  # wall-clock budget (0: none); stops at steps or this
    assets_per_step: int = _num(16, 1)  # assets in one batch (all if fewer)
    points_per_asset: int = _num(1024, 1)  # occupancy samples of each asset in a batch
    surface_points_per_asset: int = _num(256, 1)  # colour samples of each asset in a batch
    lr_network: float = _num(1e-3, 0.0, 1.0, lo_open=True)  # Adam step of the weights
    lr_codes: float = _num(1e-2, 0.0, 10.0, lo_open=True)  # Adam step of the codes
    lr_final: float = _num(0.05, 0.0, 1.0)  # cosine decay ends at this fraction of the steps
    warmup_steps: int = _num(50, 0)  # linear learning-rate warm-up
    code_penalty: float = _num(1e-4, 0.0)  # lambda of the zero-mean Gaussian code prior
    code_noise: float = _num(0.0, 0.0)  # std of Gaussian noise added to the codes each step
    colour_weight: float = _num(1.0, 0.0)  # weight of the colour L1 term
    preview_every: int = _num(0, 0)  # steps between preview sheets (0: only at the end)
    checkpoint_every: int = _num(0, 0)  # steps between checkpoints (0: only on Ctrl-C)


@dataclass(frozen=True)
class PriorConfig:
    """The prior over (shape, appearance) codes, fitted after training."""

    kind: str = field(default="kernel", metadata={"choices": ("kernel", "family", "single")})
    # kernel: a Gaussian around every code (family covariance x bandwidth^2); family: one
    # Gaussian per family; single: one Gaussian over all codes (genfield/field/prior.py)
    bandwidth: float = _num(0.3, 0.0, 1.0, lo_open=True)  # kernel width, in family spreads
    clean_fraction: float = _num(0.02, 0.0, 1.0)  # drop parts below this share of the volume
    samples: int = _num(64, 0)  # prior draws scored for validity (0: skip)


@dataclass(frozen=True)
class EvaluationConfig:
    """The figures measured at the end of training and stored in the model file."""

    iou_resolution: int = _num(64, 8, 256)  # grid of the volumetric IoU
    surface_points: int = _num(4096, 16)  # held-out surface samples for colour L1
    views: int = _num(2, 0)  # rendered views per asset against the reference tracer (0: skip)
    view_size: int = _num(64, 8, 1024)  # width and height of those views, pixels
    holdout_per_family: int = _num(8, 0)  # unseen assets per family for the generative figures
    cloud_points: int = _num(1024, 16)  # points per shape for Chamfer distances


@dataclass(frozen=True)
class TrainConfig:
    """A whole training run."""

    seed: int = _num(0, 0)  # seeds the weights, the codes and the batches
    threads: int = _num(0, 0, 256)  # torch threads (0: the machine's cores)
    sources: SourcesConfig = field(default_factory=SourcesConfig)
    network: NetworkConfig = field(default_factory=NetworkConfig)
    training: TrainingConfig = field(default_factory=TrainingConfig)
    prior: PriorConfig = field(default_factory=PriorConfig)
    evaluation: EvaluationConfig = field(default_factory=EvaluationConfig)

    def to_dict(self) -> dict[str, Any]:
        return dataclasses.asdict(self)

    def with_threads(self, threads: int) -> TrainConfig:
        return dataclasses.replace(self, threads=int(threads))

    def resolved_threads(self) -> int:
        return self.threads or max(1, os.cpu_count() or 1)


def config_from_dict(data: dict[str, Any], *, where: str = "config",
                     text: str | None = None) -> TrainConfig:
    """Build and check a TrainConfig from plain data (a parsed TOML file or stored JSON).

    ``where`` names the source in errors; ``text`` (the TOML text) lets errors carry a line.
    """
    locate = _KeyLines(text) if text is not None else None
    cfg = _build(TrainConfig, data, (), where, locate)
    _check_whole(cfg, where, locate)
    return cfg


def load_config(name_or_path: str) -> tuple[TrainConfig, Path]:
    """Read a preset name (``quick``, ``default``) or a TOML file; return it and its folder.

    Mesh globs in the config are relative to the returned folder.
    """
    path = Path(name_or_path)
    if not path.suffix and not path.exists():
        preset = PRESETS_DIR / f"{name_or_path}.toml"
        if not preset.is_file():
            known = ", ".join(sorted(p.stem for p in PRESETS_DIR.glob("*.toml")))
            raise ConfigError(f"no config file or preset named {name_or_path!r}",
                              hint=f"presets: {known}; or give a .toml file")
        path = preset
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError("config file not found", where=str(path)) from None
    except (OSError, UnicodeDecodeError) as err:
        raise ConfigError(f"cannot read the config file: {err}", where=str(path)) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        # the message ends "(at line L, column C)" on every tomllib/tomli version
        found = re.search(r"\(at line (\d+), column (\d+)\)", str(err))
        text_only = re.sub(r"\s*\(at line \d+, column \d+\)", "", str(err))
        where = f"{path}:{found[1]}:{found[2]}" if found else str(path)
        raise ConfigError(f"not valid TOML: {text_only}", where=where) from None
    return config_from_dict(data, where=str(path), text=text), path.resolve().parent


class _KeyLines:
    """Finds the line of a key path in TOML text: enough to point a person at the mistake.

    Tracks ``[table]`` headers and ``key =`` / ``a.b =`` lines; a key inside an inline table
    is reported at its parent's line. This is a locator for error messages, not a parser.
    """

    def __init__(self, text: str) -> None:
        self.lines: dict[tuple[str, ...], int] = {}
        table: tuple[str, ...] = ()
        for number, raw in enumerate(text.splitlines(), 1):
            line = raw.split("#", 1)[0].strip()
            if line.startswith("["):
                table = tuple(_bare(p) for p in line.strip("[]").split("."))
                self.lines.setdefault(table, number)
            elif "=" in line:
                key = tuple(_bare(p) for p in line.split("=", 1)[0].split("."))
                self.lines.setdefault(table + key, number)

    def line(self, path: tuple[str, ...]) -> int | None:
        for n in range(len(path), 0, -1):
            if path[:n] in self.lines:
                return self.lines[path[:n]]
        return None


def _bare(key: str) -> str:
    return key.strip().strip('"').strip("'")


def _error(message: str, path: tuple[str, ...], where: str, locate: _KeyLines | None,
           hint: str | None = None) -> ConfigError:
    line = locate.line(path) if locate else None
    place = f"{where}:{line}" if line else where
    key = ".".join(path) or "(top level)"
    return ConfigError(f"{key}: {message}", where=place, hint=hint)


def _build(cls: type, data: Any, path: tuple[str, ...], where: str,
           locate: _KeyLines | None) -> Any:
    if not isinstance(data, dict):
        raise _error(f"expected a table, got {type(data).__name__}", path, where, locate)
    hints = typing.get_type_hints(cls)
    fields = {f.name: f for f in dataclasses.fields(cls)}
    unknown = [k for k in data if k not in fields]
    if unknown:
        near = difflib.get_close_matches(unknown[0], fields, n=1)
        raise _error("unknown key", (*path, unknown[0]), where, locate,
                     hint=f"did you mean {near[0]!r}?" if near else
                     f"known keys: {', '.join(fields)}")
    values = {}
    for name, value in data.items():
        values[name] = _convert(hints[name], fields[name], value, (*path, name), where, locate)
    return cls(**values)


def _type_name(tp: Any) -> str:
    return {int: "an integer", float: "a number", str: "a string", bool: "true or false"}.get(
        tp, getattr(tp, "__name__", str(tp)))


def _convert(tp: Any, f: dataclasses.Field, value: Any, path: tuple[str, ...], where: str,
             locate: _KeyLines | None) -> Any:
    if dataclasses.is_dataclass(tp):
        return _build(tp, value, path, where, locate)
    origin = typing.get_origin(tp)
    if origin is dict:
        if not isinstance(value, dict):
            raise _error(f"expected a table of name = count, got {value!r}", path, where, locate)
        out = {}
        for k, v in value.items():
            if isinstance(v, bool) or not isinstance(v, int) or v < 1:
                raise _error(f"expected a whole number >= 1, got {v!r}", (*path, k), where, locate)
            out[str(k)] = v
        return out
    if origin is tuple:
        if not isinstance(value, (list, tuple)) or not all(isinstance(v, str) for v in value):
            raise _error(f"expected a list of strings, got {value!r}", path, where, locate)
        return tuple(value)
    ok = (isinstance(value, bool) if tp is bool else
          (isinstance(value, int) and not isinstance(value, bool)) if tp is int else
          (isinstance(value, (int, float)) and not isinstance(value, bool)) if tp is float else
          isinstance(value, tp))
    if not ok:
        raise _error(f"expected {_type_name(tp)}, got {value!r}", path, where, locate)
    value = float(value) if tp is float else value
    choices = f.metadata.get("choices")
    if choices and value not in choices:
        raise _error(f"must be one of {', '.join(map(repr, choices))}, got {value!r}", path,
                     where, locate)
    lo, hi = f.metadata.get("lo"), f.metadata.get("hi")
    if lo is not None and (value <= lo if f.metadata.get("lo_open") else value < lo):
        raise _error(f"must be {'>' if f.metadata.get('lo_open') else '>='} {lo}, got {value!r}",
                     path, where, locate)
    if hi is not None and value > hi:
        raise _error(f"must be <= {hi}, got {value!r}", path, where, locate)
    return value


def _check_whole(cfg: TrainConfig, where: str, locate: _KeyLines | None) -> None:
    """Rules that tie several keys together."""
    if not cfg.sources.families and not cfg.sources.meshes:
        raise _error("no training sources: give built-in families or mesh files",
                     ("sources",), where, locate,
                     hint='e.g. [sources] families = { washer = 8 }')
    from genfield.field.spectrum import WAVE_ENTRIES  # here: config loads without numpy

    n = cfg.network
    if n.colour_harmonics and n.appearance_dim <= WAVE_ENTRIES:
        raise _error(f"must be > {WAVE_ENTRIES} when network.colour_harmonics > 0 (the first "
                     f"{WAVE_ENTRIES} entries hold each asset's own colour wave), got {n.appearance_dim}",
                     ("network", "appearance_dim"), where, locate)
    t = cfg.training
    if t.warmup_steps >= t.steps:
        raise _error(f"must be smaller than training.steps ({t.steps}), got {t.warmup_steps}",
                     ("training", "warmup_steps"), where, locate)
