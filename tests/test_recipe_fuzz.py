"""Property tests: any text, and any edit of a valid recipe, either checks or raises a
RecipeError, never anything else. The long run is ``make fuzz`` (10,000 inputs)."""

from __future__ import annotations

from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from genfield.errors import RecipeError
from tests.fuzz_recipes import _PIECES, exercise, mutate, run, toy_codebook

EXAMPLES = [p.read_text(encoding="utf-8") for p in sorted(Path("recipes").glob("*.gfr"))]
BOOK = toy_codebook()


def _outcome(text: str, folder: Path) -> str:
    try:
        return exercise(text, folder, BOOK)
    except RecipeError:  # exercise turns these into "error"; this would be a bug in it
        raise AssertionError("exercise let a RecipeError through") from None


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.text(alphabet=st.characters(codec="utf-8"), max_size=200))
def test_any_text_checks_or_is_a_recipe_error(tmp_path, text):
    assert _outcome(text, tmp_path) in ("ok", "error")


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.sampled_from(_PIECES + ["camera", "object", "{", "}", "\n", "a", "1"]),
                max_size=60).map("".join))
def test_any_string_of_the_languages_pieces_checks_or_is_a_recipe_error(tmp_path, text):
    assert _outcome(text, tmp_path) in ("ok", "error")


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.sampled_from(EXAMPLES), st.randoms(use_true_random=False))
def test_any_edit_of_an_example_checks_or_is_a_recipe_error(tmp_path, text, r):
    (tmp_path / "common").mkdir(exist_ok=True)
    for f in Path("recipes/common").glob("*.gfr"):
        (tmp_path / "common" / f.name).write_text(f.read_text())
    assert _outcome(mutate(text, r), tmp_path) in ("ok", "error")


def test_a_short_fuzz_run_finds_no_crash():
    outcomes, crashes = run(300, seed=1)
    assert not crashes, crashes[0][2]
    assert outcomes["ok"] > 30 and outcomes["error"] > 100  # both paths were exercised
