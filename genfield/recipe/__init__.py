"""The scene language: parse recipes, check them, and draw concrete scenes for (seed, i).

``load_recipe(path)`` reads, includes and checks a ``.gfr`` file into a ``Recipe``;
``draw_scene(recipe, codebook, seed, index)`` gives the concrete ``genfield.scene.Scene``;
``sweep_frames`` the overrides of a sweep; ``format_recipe`` the canonical text. Nothing
here imports torch. The language is described in DEVELOPERS.md ("The recipe language").
"""

from genfield.recipe.codes import check_codes
from genfield.recipe.draw import draw_scene
from genfield.recipe.formatter import format_recipe
from genfield.recipe.loader import load_recipe, loads
from genfield.recipe.parser import parse_text
from genfield.recipe.spec import Recipe
from genfield.recipe.sweeps import Frame, sweep_frames

__all__ = ["Frame", "Recipe", "check_codes", "draw_scene", "format_recipe", "load_recipe",
           "loads", "parse_text", "sweep_frames"]
