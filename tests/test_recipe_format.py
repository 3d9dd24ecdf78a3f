"""The formatter: its output parses back to the same tree and checks to the same recipe."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from genfield.errors import RecipeError
from genfield.recipe import format_recipe, load_recipe, loads
from genfield.recipe.formatter import format_expr
from genfield.recipe.parser import parse_text
from tests.fuzz_recipes import random_recipe

EXAMPLES = sorted(Path("recipes").glob("*.gfr"))


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_every_example_formats_to_an_equal_recipe_and_is_a_fixed_point(path):
    recipe = load_recipe(path)
    text = format_recipe(recipe)
    again = loads(text, path=path)
    assert again == recipe
    assert again.program.statements == recipe.program.statements
    assert format_recipe(again) == text
    assert [c.text for c in again.program.comments] == [c.text for c in recipe.program.comments]


def test_the_layout_is_canonical_and_comments_stay_put():
    messy = ("# top\n\n\n\nx   =   3cm    # x\ncamera   {   # the camera\n\n  fov 40deg\n"
             "  # inside\n    size   64x48\n  # last\n}   # end\nobject cup {}\n")
    assert format_recipe(parse_text(messy)) == (
        "# top\n\nx = 3cm  # x\ncamera {  # the camera\n  fov 40deg\n  # inside\n  size 64x48\n"
        "  # last\n}  # end\nobject cup {\n}\n")


# ---- expressions of every kind (hypothesis) -----------------------------------------------

UNITS = ["", "m", "cm", "mm", "deg", "rad", "px"]
numbers = st.builds(lambda x, u: f"{x:g}{u}", st.floats(-1e6, 1e6, allow_nan=False), st.sampled_from(UNITS))
plain = st.builds(lambda x: f"{x:g}", st.floats(0, 100, allow_nan=False))
whole = st.integers(0, 99).map(str)
names = st.from_regex(r"[a-z][a-z0-9_]{0,6}", fullmatch=True).filter(
    lambda n: n not in {"to", "by", "dim", "sd", "per", "pick", "prior", "lerp", "slerp", "shift",
                        "wearing", "normal", "clamp", "steps", "temperature", "yes", "no",
                        "include"})
texts = st.from_regex(r'"[a-z0-9 _.-]{0,10}"', fullmatch=True)
atoms_base = st.one_of(numbers, texts, names, st.sampled_from(["yes", "no", "#a1b2c3", "64x48"]))


def _vector(parts):
    return "(" + ", ".join(parts) + ")"


exprs = st.deferred(lambda: st.one_of(shifted, st.builds(lambda a, b: f"{a} wearing {b}", shifted, shifted)))
atoms = st.one_of(atoms_base, st.lists(exprs, min_size=2, max_size=3).map(_vector))
items = st.lists(st.one_of(st.deferred(lambda: draws), st.builds(lambda a, w: f"{a}: {w}", st.deferred(lambda: draws), plain)),
                 min_size=1, max_size=3).map(", ".join)
draws = st.one_of(
    atoms,
    st.builds(lambda a, b: f"{a}..{b}", atoms, atoms),
    st.builds(lambda a, b, n: f"{a}..{b} steps {n}", atoms, atoms, whole),
    st.builds(lambda a, b: f"{a} to {b}", atoms, atoms),
    st.builds(lambda m, s: f"normal {m} sd {s}", atoms, atoms),
    st.builds(lambda m, s, a, b: f"normal {m} sd {s} clamp {a}..{b}", atoms, atoms, atoms, atoms),
    items.map(lambda i: f"pick [{i}]"),
    st.just("prior"),
    st.deferred(lambda: draws).map(lambda t: f"prior temperature {t}"),
    items.map(lambda i: f"lerp [{i}]"),
    items.map(lambda i: f"slerp [{i}]"),
)
shifted = st.one_of(draws, st.builds(lambda a, d, b: f"{a} shift dim {d} by {b}", st.deferred(lambda: shifted), whole, draws))


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(exprs)
def test_any_expression_prints_back_to_the_same_tree(text):
    try:
        (setting,) = parse_text(f"v {text}\n").statements
    except RecipeError as err:  # the generator can nest deeper than the parser's guard allows
        assert "nested more than" in err.message  # (tests/test_recipe_errors.py tests the guard)
        assume(False)
    printed = format_expr(setting.values[0])
    (again,) = parse_text(f"v {printed}\n").statements
    assert again == setting


@settings(max_examples=80, deadline=None)
@given(st.randoms(use_true_random=False))
def test_any_made_up_recipe_formats_to_the_same_spec(r):
    text = random_recipe(r)
    program = parse_text(text)
    printed = format_recipe(program)
    assert parse_text(printed).statements == program.statements
    try:
        recipe = loads(text, path="made-up.gfr")
    except RecipeError as err:
        with pytest.raises(RecipeError) as again:
            loads(printed, path="made-up.gfr")
        assert again.value.message == err.message  # the same complaint, at the moved place
        return
    assert loads(printed, path="made-up.gfr") == recipe
