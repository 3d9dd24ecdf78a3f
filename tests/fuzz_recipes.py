"""Fuzz the recipe language: every input either checks (and draws) or raises RecipeError.

Inputs are of three kinds, in turn: recipes made up from the language's pieces, the example
recipes with random edits (characters and words deleted, inserted, swapped, lines repeated
or cut), and random text over the language's characters. Each one is checked; a recipe that
checks is also drawn (two scenes, with a small code table), formatted and checked again.
Anything raised that is not a RecipeError is a crash: the input is printed and the exit
status is 1.

    python -m tests.fuzz_recipes --count 10000      # what `make fuzz` runs
"""

from __future__ import annotations

import argparse
import random
import shutil
import sys
import tempfile
import traceback
from pathlib import Path

import numpy as np

from genfield.errors import RecipeError
from genfield.field.codebook import CodeBook

RECIPES = Path(__file__).resolve().parent.parent / "recipes"
FAMILIES = ("washer", "hex_nut", "l_bracket", "bushing", "cup", "bowl", "bottle")
NAMES = tuple(f"{f}-{i:04d}" for f in FAMILIES for i in range(8))


def toy_codebook(names: tuple[str, ...] = NAMES, shape_dim: int = 6, appearance_dim: int = 4,
                 seed: int = 0) -> CodeBook:
    """A small CodeBook in numpy: random codes, one Gaussian prior (mean 0, sd 0.5)."""
    g = np.random.default_rng(seed)
    d = shape_dim + appearance_dim
    return CodeBook(
        names=tuple(names), families=tuple(n.rsplit("-", 1)[0] for n in names),
        shape=g.normal(size=(len(names), shape_dim)).astype(np.float32),
        appearance=g.normal(size=(len(names), appearance_dim)).astype(np.float32),
        prior_weights=np.ones(1), prior_means=np.zeros((1, d)),
        prior_chols=0.5 * np.eye(d)[None],
    )


# ---- made-up recipes ----------------------------------------------------------------------


def _num(r: random.Random, lo: float, hi: float, unit: str = "") -> str:
    x = r.uniform(lo, hi)
    return (f"{x:.3g}" if r.random() < 0.7 else f"{round(x)}") + unit


def _value(r: random.Random, lo: float, hi: float, unit: str) -> str:
    kind = r.random()
    if kind < 0.4:
        return _num(r, lo, hi, unit)
    a, b = sorted((r.uniform(lo, hi), r.uniform(lo, hi)))
    if kind < 0.7:
        return f"{a:.3g}{unit}..{b:.3g}{unit}"
    if kind < 0.85:
        clamp = f" clamp {a:.3g}{unit}..{b:.3g}{unit}" if r.random() < 0.7 else ""
        return f"normal {(a + b) / 2:.3g}{unit} sd {(b - a) / 4:.3g}{unit}{clamp}"
    return f"pick [{a:.3g}{unit}: {r.randint(1, 3)}, {b:.3g}{unit}]"


def _code(r: random.Random) -> str:
    names = r.sample(NAMES, 3)
    kind = r.random()
    if kind < 0.3:
        code = f'"{names[0]}"'
    elif kind < 0.45:
        code = f"pick [{', '.join(chr(34) + n + chr(34) for n in names)}]"
    elif kind < 0.6:
        code = "prior" + (f" temperature {_value(r, 0, 1.5, '')}" if r.random() < 0.6 else "")
    elif kind < 0.85:
        word = r.choice(["lerp", "slerp"])
        code = f"{word} [" + ", ".join(f'"{n}": {_value(r, 0.1, 2, "")}' for n in names[:2]) + "]"
    else:
        code = "(" + ", ".join(_num(r, -1, 1) for _ in range(r.choice([4, 6, 10]))) + ")"
    if r.random() < 0.2:
        code += f" shift dim {r.randint(0, 3)} by {_value(r, -0.5, 0.5, '')}"
    return code


def random_recipe(r: random.Random) -> str:
    """A recipe from the language's pieces; most check, some are (deliberately) impossible."""
    out = ["# made up by tests/fuzz_recipes.py"]
    if r.random() < 0.5:
        out.append(f"spin = {_value(r, 0, 360, 'deg')}" + r.choice(["", " per object", " per image"]))
    out.append(f"area = (-{_num(r, 10, 40)}cm, -{_num(r, 10, 40)}cm)..({_num(r, 10, 40)}cm, "
               f"{_num(r, 10, 40)}cm)")
    named = r.random() < 0.3  # fixed settings through constants
    if named:
        out += [f"n = {r.randint(1, 50)}", f"sz = {r.randint(16, 64)}x{r.randint(16, 64)}",
                'tag = pick ["thing"]', f"flag = {r.choice(['yes', 'no'])}"]
    if r.random() < 0.6:
        train = round(r.uniform(0.5, 0.9), 2)
        out += ["dataset {", f"  images {'n' if named else r.randint(1, 50)}",
                f"  seed {r.randint(0, 99)}",
                f"  train {train}", f"  val {round(1 - train, 2)}",
                "  outputs " + ", ".join(r.sample(["image", "mask", "depth", "normals"], 2)), "}"]
    out += ["camera {", f"  size {'sz' if named else f'{r.randint(16, 256)}x{r.randint(16, 256)}'}",
            f"  fov {_value(r, 20, 80, 'deg')}" if r.random() < 0.7 else f"  focal {_num(r, 50, 300)}px"]
    if r.random() < 0.7:
        out += [f"  distance {_value(r, 30, 120, 'cm')}", f"  elevation {_value(r, 5, 80, 'deg')}",
                f"  azimuth {_value(r, 0, 360, 'deg')}"]
    else:
        out += [f"  position ({_num(r, -1, 1)}m, -1m, {_value(r, 20, 60, 'cm')})",
                "  target (0, 0, 5cm)"]
    out.append("}")
    if r.random() < 0.5:
        out += ["light {", f"  elevation {_value(r, 10, 80, 'deg')}", f"  strength {_num(r, 0, 2)}",
                f"  shadows {'flag' if named else 'no'}", "}"]
    if r.random() < 0.5:
        out += ["backdrop {", "  top #d0d4d8", "  bottom #606468", "  floor #7a7570", "}"]
    for k in range(r.randint(1, 3)):
        out += [f"object part{k} {{", f"  count {r.randint(0, 2)} to {r.randint(2, 4)}"]
        if named:
            out.append("  label tag")
        if r.random() < 0.6:
            wearing = f" wearing {_code(r)}" if r.random() < 0.3 else ""
            out.append(f"  asset {_code(r)}{wearing}")
        else:
            out += [f"  shape {_code(r)}", f"  appearance {_code(r)}"]
        out += [f"  scale {_value(r, 1, 4, 'cm')}", f"  yaw {'spin' if 'spin' in out[1] else '0deg'}",
                "  on floor", "  inside area", "}"]
    if r.random() < 0.5:
        out += ["sweep {", f"  part0.scale 1cm..3cm steps {r.randint(2, 5)}"]
        if r.random() < 0.5:
            out += ["  camera.fov 30deg, 50deg" if "fov" in "".join(out) else "  part0.yaw 0deg, 90deg",
                    f"  mode {r.choice(['grid', 'zip'])}"]
        out.append("}")
    return "\n".join(out) + "\n"


# ---- edits and noise ----------------------------------------------------------------------

_PIECES = ['"', "{", "}", "(", ")", "[", "]", ",", ":", "=", "..", ".", "#", "# c", "\n", " ",
           "-", "0", "1e9", "3cm", "deg", "x", "pick", "prior", "lerp", "slerp", "shift",
           "wearing", "to", "per", "normal", "sd", "clamp", "steps", "dim", "by", "yes",
           "include", '"../x.gfr"', "#abcdef", "\t", "\u00e9", "\x00", "\r"]


def mutate(text: str, r: random.Random) -> str:
    """One to three random edits of a recipe's text."""
    for _ in range(r.randint(1, 3)):
        op = r.random()
        i = r.randint(0, len(text))
        if op < 0.25 and text:
            j = min(len(text), i + r.randint(1, 8))
            text = text[:i] + text[j:]
        elif op < 0.55:
            text = text[:i] + r.choice(_PIECES) + text[i:]
        elif op < 0.7:
            lines = text.split("\n")
            k = r.randrange(len(lines))
            lines.insert(k, lines[r.randrange(len(lines))])
            text = "\n".join(lines)
        elif op < 0.85:
            words = text.split(" ")
            if len(words) > 2:
                a, b = r.randrange(len(words)), r.randrange(len(words))
                words[a], words[b] = words[b], words[a]
            text = " ".join(words)
        else:
            text = text[:i]
    return text


def noise(r: random.Random) -> str:
    return "".join(r.choice(_PIECES + list("abcz_0189")) for _ in range(r.randint(0, 60)))


# ---- one input ----------------------------------------------------------------------------


def exercise(text: str, folder: Path, codebook: CodeBook) -> str:
    """Check, draw, sweep and re-format one input; 'ok' or 'error' (a RecipeError)."""
    from genfield.recipe import draw_scene, format_recipe, loads, sweep_frames

    try:
        recipe = loads(text, path=folder / "fuzz.gfr")
    except RecipeError:
        return "error"
    again = loads(format_recipe(recipe), path=folder / "fuzz.gfr")
    if again != recipe:
        raise AssertionError("the formatted recipe checks to a different spec")
    try:
        for index in (0, 1):
            draw_scene(recipe, codebook, 3, index)
        if recipe.sweeps:
            frame = sweep_frames(recipe)[0]
            draw_scene(recipe, codebook, 3, frame.index, frame.overrides)
    except RecipeError:
        return "error"
    return "ok"


def inputs(count: int, seed: int):
    """``count`` inputs: made-up, mutated and random, in turn."""
    r = random.Random(seed)
    examples = [p.read_text(encoding="utf-8") for p in sorted(RECIPES.glob("*.gfr"))]
    for k in range(count):
        kind = k % 3
        if kind == 0:
            yield "made up", random_recipe(r)
        elif kind == 1:
            yield "mutated", mutate(r.choice(examples) if r.random() < 0.7 else random_recipe(r), r)
        else:
            yield "random", noise(r)


def run(count: int, seed: int = 0) -> tuple[dict[str, int], list[tuple[str, str, str]]]:
    """Outcome counts and the crashes (kind, input, traceback)."""
    outcomes: dict[str, int] = {"ok": 0, "error": 0, "crash": 0}
    crashes: list[tuple[str, str, str]] = []
    codebook = toy_codebook()
    with tempfile.TemporaryDirectory(prefix="genfield-fuzz-") as tmp:
        folder = Path(tmp)
        shutil.copytree(RECIPES / "common", folder / "common")
        for kind, text in inputs(count, seed):
            try:
                outcomes[exercise(text, folder, codebook)] += 1
            except Exception:  # noqa: BLE001 (anything but a RecipeError is what we hunt)
                outcomes["crash"] += 1
                crashes.append((kind, text, traceback.format_exc()))
    return outcomes, crashes


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--count", type=int, default=1000, help="inputs to try (default 1000)")
    p.add_argument("--seed", type=int, default=0, help="seed of the input stream")
    args = p.parse_args(argv)
    outcomes, crashes = run(args.count, args.seed)
    for kind, text, trace in crashes[:5]:
        print(f"--- crash on a {kind} input:\n{text!r}\n{trace}")
    print(f"{args.count} inputs: {outcomes['ok']} checked and drew, {outcomes['error']} "
          f"refused with a RecipeError, {outcomes['crash']} crashed")
    return 1 if crashes else 0


if __name__ == "__main__":
    sys.exit(main())
