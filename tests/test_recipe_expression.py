"""One code expression on its own (``genfield mesh --shape``) resolves as it would in a recipe."""

from __future__ import annotations

import numpy as np
import pytest

from genfield.errors import RecipeError
from genfield.recipe.expression import resolve_code_text
from genfield.seeds import rng
from tests.fuzz_recipes import toy_codebook

BOOK = toy_codebook()


def test_a_named_code_and_a_blend_resolve_like_in_a_recipe():
    vec, expr = resolve_code_text('"cup-0001"', "shape", BOOK, rng(0, 0, "t"))
    assert np.array_equal(vec, BOOK.shape[BOOK.index("cup-0001")].astype(np.float64))
    assert expr == {"kind": "named", "name": "cup-0001"}
    vec, expr = resolve_code_text('lerp ["cup-0000": 1, "cup-0001": 1]', "joint", BOOK,
                                  rng(0, 0, "t"))
    assert vec.shape == (BOOK.shape_dim + BOOK.appearance_dim,)
    assert expr["weights"] == [0.5, 0.5]


def test_a_prior_draw_uses_the_given_stream():
    a, _ = resolve_code_text("prior temperature 0.5", "appearance", BOOK, rng(3, 0, "t"))
    _, expect = BOOK.sample_prior(rng(3, 0, "t"), 0.5)
    assert np.allclose(a, expect)


def test_errors_name_the_option_as_the_file():
    with pytest.raises(RecipeError) as caught:
        resolve_code_text('"cpu-0001"', "shape", BOOK, rng(0, 0, "t"))
    assert caught.value.one_line() == ("--shape:1:7: the model has no code named 'cpu-0001' "
                                       "(did you mean 'cup-0001'?)")
    with pytest.raises(RecipeError, match="expected one code expression"):
        resolve_code_text('"a", "b"', "shape", BOOK, rng(0, 0, "t"))


def test_the_recipe_benchmark_case_is_registered():
    from genfield.bench import all_cases

    assert "recipe_check" in all_cases()
