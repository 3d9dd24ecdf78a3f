"""The benchmark suite behind ``genfield bench``: speed and quality figures measured in one run.

A case is a function ``fn(quick: bool) -> list[Figure]`` registered with ``@case``. Times are
medians of repeats; a speed target is stated as a ratio against a baseline measured in the
same process and run, so the figure means the same on a fast or a slow machine. Each package
keeps its cases in its own ``benchmarks.py``; ``CASE_MODULES`` lists them.
"""

from __future__ import annotations

import importlib
import os
import platform
import statistics
import subprocess
import sys
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass

# Modules whose import registers cases. Add a package's benchmarks module here.
CASE_MODULES: tuple[str, ...] = ("genfield.bench", "genfield.mesh.benchmarks", "genfield.assets.benchmarks",
                                 "genfield.dataset.benchmarks", "genfield.recipe.benchmarks",
                                 "genfield.render.benchmarks", "genfield.field.benchmarks")


@dataclass(frozen=True)
class Figure:
    """One measured number."""

    name: str  # e.g. "help_seconds", "speedup_vs_mlp"
    value: float
    unit: str = ""  # "s", "images/s", "x", "IoU", ...
    note: str = ""  # what it is measured against, or the target


@dataclass(frozen=True)
class Case:
    name: str
    description: str
    fn: Callable[[bool], list[Figure]]


_CASES: dict[str, Case] = {}


def case(name: str, description: str) -> Callable[[Callable[[bool], list[Figure]]], Callable]:
    """Register a benchmark case under ``name``."""

    def register(fn: Callable[[bool], list[Figure]]) -> Callable[[bool], list[Figure]]:
        _CASES[name] = Case(name, description, fn)
        return fn

    return register


def median_seconds(fn: Callable[[], object], repeats: int, warmup: int = 1) -> float:
    """Median wall time of ``fn()`` over ``repeats`` calls, after ``warmup`` untimed calls."""
    for _ in range(warmup):
        fn()
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def quick_model():
    """The quick-preset model the demo uses, from its cache (trained on first use, about half
    a minute on two free cores); the benchmark cases that need a trained model share it."""
    from genfield.commands.demo import demo_model
    from genfield.field.model import load_model

    path, _ = demo_model(None, False)
    return load_model(path)


def machine() -> dict[str, object]:
    """What the figures were measured on."""
    return {
        "platform": platform.platform(),
        "processor": platform.processor() or platform.machine(),
        "cpus": os.cpu_count(),
        "python": platform.python_version(),
    }


def all_cases() -> dict[str, Case]:
    for module in CASE_MODULES:
        importlib.import_module(module)
    return dict(_CASES)


def run_cases(names: list[str] | None = None, *, quick: bool = False,
              progress: Callable[[str], None] = lambda _m: None) -> dict[str, object]:
    """Run the named cases (all if None) and return a JSON-able report."""
    from genfield.errors import UsageError

    cases = all_cases()
    chosen = names or list(cases)
    unknown = [n for n in chosen if n not in cases]
    if unknown:
        raise UsageError(f"unknown benchmark case {unknown[0]!r}", hint=f"known: {', '.join(cases)}")
    results: dict[str, list[dict[str, object]]] = {}
    for i, name in enumerate(chosen, 1):
        progress(f"[{i}/{len(chosen)}] {name}: {cases[name].description}")
        start = time.perf_counter()
        figures = cases[name].fn(quick)
        results[name] = [asdict(f) for f in figures]
        progress(f"[{i}/{len(chosen)}] {name} done in {time.perf_counter() - start:.1f} s")
    return {"machine": machine(), "quick": quick, "cases": results}


def format_table(report: dict[str, object]) -> str:
    """A Markdown table of every figure, ready to paste into the README."""
    m = report["machine"]
    lines = [
        f"Measured on {m['processor']}, {m['cpus']} CPUs, Python {m['python']}"  # type: ignore[index]
        + (" (--quick)" if report["quick"] else ""),
        "",
        "| case | figure | value | unit | note |",
        "|---|---|---:|---|---|",
    ]
    for name, figures in report["cases"].items():  # type: ignore[union-attr]
        for f in figures:
            value = f["value"]
            text = f"{value:.4g}" if isinstance(value, float) else str(value)
            lines.append(f"| {name} | {f['name']} | {text} | {f['unit']} | {f['note']} |")
    return "\n".join(lines)


def _time_command(code: str, repeats: int) -> float:
    cmd = [sys.executable, "-c", code]
    return median_seconds(lambda: subprocess.run(cmd, check=True, capture_output=True), repeats)


@case("cli_startup", "time of 'genfield --help' against a bare Python start")
def _cli_startup(quick: bool) -> list[Figure]:
    repeats = 3 if quick else 7
    bare = _time_command("pass", repeats)
    helped = _time_command("import genfield.cli as c; c.main(['--help'])", repeats)
    probe = subprocess.run(
        [sys.executable, "-c",
         "import sys, genfield.cli as c; c.main(['--help']); print('torch' in sys.modules)"],
        check=True, capture_output=True, text=True,
    )
    torch_loaded = probe.stdout.strip().splitlines()[-1] == "True"
    return [
        Figure("help_seconds", helped, "s", "target < 0.5 s"),
        Figure("bare_python_seconds", bare, "s", "baseline: python -c pass"),
        Figure("help_over_bare", helped / bare, "x", "same run"),
        Figure("imports_torch", float(torch_loaded), "bool", "must be 0"),
    ]
