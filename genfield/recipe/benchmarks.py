"""Benchmark cases of the recipe language: `genfield check` start to finish, and drawing.

Baselines measured in the same run: a bare ``python -c pass`` and ``python -c "import numpy"``
(what any command of a numpy project pays before it reads a file) for the check; for drawing,
making the numpy Generators one scene needs (one SeedSequence + PCG64 per stream, the
floor of the reproducibility rule), so the ratio says what the rest of a draw costs.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
from pathlib import Path

from genfield.bench import Figure, case, median_seconds

RECIPES = Path(__file__).resolve().parent.parent.parent / "recipes"


def _run(args: list[str]) -> None:
    subprocess.run([sys.executable, *args], check=True, capture_output=True)


def _cpu_seconds(args: list[str], repeats: int) -> float:
    """Median CPU time (user + system) of a child process: steadier than wall time when
    other work shares the machine."""
    import resource

    times = []
    for _ in range(repeats):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        _run(args)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        times.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
    return statistics.median(times)


@case("recipe_check", "'genfield check' of each example recipe, and drawing scenes from it")
def _recipe_check(quick: bool) -> list[Figure]:
    from genfield.recipe import draw_scene, load_recipe
    from genfield.recipe.parser import lark_parser
    from genfield.seeds import rng

    repeats = 3 if quick else 7
    examples = sorted(RECIPES.glob("*.gfr"))
    if not examples:
        return [Figure("examples", 0.0, "", "no recipes/ folder next to this installation")]
    bare = median_seconds(lambda: _run(["-c", "pass"]), repeats)
    numpy = median_seconds(lambda: _run(["-c", "import numpy"]), repeats)
    checks = [median_seconds(lambda p=p: _run(["-m", "genfield", "check", str(p)]), repeats)
              for p in examples]
    cpu = max(_cpu_seconds(["-m", "genfield", "check", str(p)], repeats) for p in examples)
    numpy_cpu = _cpu_seconds(["-c", "import numpy"], repeats)
    build = median_seconds(lark_parser.__wrapped__, repeats)
    load = median_seconds(lambda: [load_recipe(p) for p in examples], repeats) / len(examples)
    recipe = load_recipe(RECIPES / "workshop-tray.gfr")
    n = 20 if quick else 100
    draw = median_seconds(lambda: [draw_scene(recipe, None, 11, i) for i in range(n)], 3) / n
    scene = draw_scene(recipe, None, 11, 0)
    streams = 5 + len(recipe.objects) + 4 * len(scene.objects)  # per image, per block, per object
    floor = median_seconds(lambda: [rng(11, i, "x", 1, 2) for i in range(streams * n)], 3) / n
    return [
        Figure("check_seconds_worst", max(checks), "s", f"slowest of {len(checks)} examples; "
               "target well under 1 s"),
        Figure("check_seconds_median", sorted(checks)[len(checks) // 2], "s"),
        Figure("bare_python_seconds", bare, "s", "baseline: python -c pass"),
        Figure("import_numpy_seconds", numpy, "s", "baseline: python -c 'import numpy'"),
        Figure("check_over_numpy_start", max(checks) / numpy, "x", "same run"),
        Figure("check_cpu_seconds_worst", cpu, "s", "user + system time of the slowest"),
        Figure("import_numpy_cpu_seconds", numpy_cpu, "s", "baseline, user + system"),
        Figure("parser_build_seconds", build, "s", "LALR tables from grammar/recipe.lark"),
        Figure("load_recipe_ms", 1e3 * load, "ms", "parse + include + check, per example"),
        Figure("draw_scene_ms", 1e3 * draw, "ms", f"workshop-tray, {len(scene.objects)} objects "
               "in scene 0, no code table"),
        Figure("draw_over_streams", draw / floor, "x", f"baseline: making its ~{streams} "
               "Generators"),
    ]
