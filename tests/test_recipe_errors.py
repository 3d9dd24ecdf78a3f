"""Recipe errors: exact file:line:column, pinned messages, the caret, "did you mean".

Every message here is pinned: a change of wording is a change of the language's interface.
"""

from __future__ import annotations

import pytest

from genfield.errors import RecipeError
from genfield.recipe import check_codes, draw_scene, loads
from genfield.recipe.parser import parse_text
from tests.fuzz_recipes import toy_codebook

SYNTAX = [
    ('camera {\n  fov 40deg\n',
     "r.gfr:2:12: the block opened at line 1 is not closed (add '}' on a line of its own)"),
    ('fov: 40deg\n',
     "r.gfr:1:4: a setting is written 'name value' without ':'; got ':'"),
    ('camera {\n  fov = 40deg\n}\n',
     "r.gfr:2:7: '=' defines a constant outside blocks; inside a block write 'name value'; got '='"),
    ('camera { fov 40deg\n}\n',
     "r.gfr:1:10: start a new line after '{': each setting goes on a line of its own; got 'fov'"),
    ('camera {\n  fov 40deg }\n',
     "r.gfr:2:13: put the closing '}' on a line of its own; got '}'"),
    ('model\n',
     'r.gfr:1:6: model needs a value'),
    ('camera {\n  fov\n}\n',
     'r.gfr:2:6: fov needs a value'),
    ('a = 3 cm\n',
     'r.gfr:1:7: write the unit right after the number, with no space: 3cm'),
    ('a = 3 degrees\n',
     'r.gfr:1:7: write the unit right after the number, with no space: 3deg'),
    ('camera {\n  scale 3 big\n}\n',
     "r.gfr:2:11: unexpected 'big' after a number (units are m, cm, mm, deg, rad, px, written right after the number; separate values with ',')"),
    ('a = (1cm 2cm)\n',
     "r.gfr:1:10: separate the values with ','; got '2cm'"),
    ('a = (1cm, 2cm\n',
     "r.gfr:1:14: a '(' is not closed with ')' on this line; got the end of the line"),
    ('a = 1..\n',
     'r.gfr:1:8: a range needs its second end, like 1cm..3cm; got the end of the line'),
    ('a = 30degrees\n',
     "r.gfr:1:5: unknown unit 'degrees' in 30degrees (write 30deg)"),
    ('a = #abc\n',
     "r.gfr:1:5: a colour is '#' and six hex digits, like #a1b2c3; got #abc"),
    ('#hello\n',
     "r.gfr:1:1: a comment starts with '#' and a space (write '# hello')"),
    ('a = "abc\n',
     'r.gfr:1:5: this text has no closing \'"\' on its line'),
    ('pick = 3\n',
     "r.gfr:1:1: 'pick' is a reserved word of the recipe language (choose another name)"),
    ('a = 3 $\n',
     'r.gfr:1:7: unexpected character \'$\' (a recipe holds names, numbers with units, "texts", #colours, ( ) [ ] { } , : = and .. ; a comment starts with \'# \')'),
    ('a = pick [1, 2\n',
     "r.gfr:1:15: the '[' opened at 1:10 is not closed (add ']')"),
    ('object x {\n  count 3\n  scale 2cm\n',
     "r.gfr:3:12: the block opened at line 1 is not closed (add '}' on a line of its own)"),
    ('a = 160x\n',
     'r.gfr:1:5: an image size is written like 160x120; got 160x'),
    ('x = 3.\n',
     "r.gfr:1:6: a '.' belongs in a number (0.5), a range (1..2) or a parameter name (camera.fov)"),
    ('a = 1 2\n',
     "r.gfr:1:7: separate the values with ','; got '2'"),
    ('a = pick [1, 2\nb = 3\n',
     "r.gfr:2:1: a '[' is not closed with ']'; got 'b'"),
    ('}\n',
     "r.gfr:1:1: this '}' closes no block; got '}'"),
    ('a = 1 to\n',
     'r.gfr:1:9: expected a value; got the end of the line'),
    ('x = 1e999\n',
     'r.gfr:1:5: the number 1e999 is too large (numbers in a recipe stay within +-1e+12)'),
    ('camera {\n  azimuth 10deg..20deg steps 2.5\n}\n',
     'r.gfr:2:30: the number of steps must be a whole number, got 2.5'),
    ('a.b = 3\n',
     "r.gfr:1:1: a constant's name cannot contain '.', got a.b (dotted names are parameters, used as keys in sweep blocks)"),
    ('a.b {\n}\n',
     "r.gfr:1:1: a block's kind is one word, got a.b"),
    ('camera {',
     "r.gfr:1:9: the block opened at line 1 is not closed (add '}' on a line of its own)"),
    ('x =',
     'r.gfr:1:4: x needs a value'),
    ('object cup {\n  at (1cm, 2cm]\n}\n',
     "r.gfr:2:15: this ']' does not match the '(' opened at 2:6 (close it with ')')"),
    ('a = (1cm,\n 2cm)\n',
     "r.gfr:1:10: a vector's parts are written on one line; got the end of the line"),
    ('a = (1, 2))\n',
     "r.gfr:1:11: this ')' has no '(' to close"),
    ('a = 3é\n',
     'r.gfr:1:6: unexpected character \'é\' (a recipe holds names, numbers with units, "texts", #colours, ( ) [ ] { } , : = and .. ; a comment starts with \'# \')'),
]

SEMANTIC = [
    ('camra {\n}\n',
     "r.gfr:1:1: unknown block 'camra' (did you mean 'camera'?)"),
    ('camera {\n  azimut 3deg\n}\n',
     "r.gfr:2:3: unknown camera setting 'azimut' (did you mean 'azimuth'?)"),
    ('light {\n  fov 30deg\n}\n',
     "r.gfr:2:3: unknown light setting 'fov' ('fov' belongs in a camera block)"),
    ('spin = 1deg\nobject cup {\n  asset "cup-0000"\n  yaw spni\n}\n',
     "r.gfr:4:7: unknown name 'spni' (did you mean 'spin'?)"),
    ('object cup {\n  asset "cup-0000"\n  yaw 3cm\n}\n',
     'r.gfr:3:7: cup yaw needs an angle (deg or rad); 3cm is a length'),
    ('object cup {\n  asset "cup-0000"\n  scale 3\n}\n',
     'r.gfr:3:9: cup scale needs a length (m, cm or mm): 3 has no unit (write it with its unit, like 5cm)'),
    ('object cup {\n  asset "cup-0000"\n  scale -0.5cm\n}\n',
     'r.gfr:3:9: cup scale must be > 0, got -0.5cm'),
    ('object cup {\n  asset "cup-0000"\n  scale -1cm..2cm\n}\n',
     'r.gfr:3:9: cup scale must be > 0, but -1cm..2cm can give -1cm (narrow the range, or clamp the normal)'),
    ('object cup {\n  asset "cup-0000"\n  scale normal 3cm sd 1cm\n}\n',
     'r.gfr:3:9: cup scale must be > 0, but normal 3cm sd 1cm can give any value (narrow the range, or clamp the normal)'),
    ('object cup {\n  asset "cup-0000"\n  scale 5cm..2cm\n}\n',
     'r.gfr:3:9: the range 5cm..2cm is empty: its first end is above its second (write the smaller end first)'),
    ('object cup {\n  asset "cup-0000"\n  count 5 to 2\n}\n',
     'r.gfr:3:9: the range 5 to 2 is empty: 5 is above 2'),
    ('dataset {\n  train 0.8\n  val 0.3\n}\n',
     'r.gfr:1:1: the splits must add up to 1, got train 0.8 + val 0.3 + test 0 = 1.1'),
    ('camera {\n  fov 180deg\n}\n',
     'r.gfr:2:7: camera fov must be between 0deg and 180deg (both excluded), got 180deg'),
    ('camera {\n  fov 0deg..30deg\n}\n',
     'r.gfr:2:7: camera fov must be between 0deg and 180deg (both excluded), but 0deg..30deg can give 0deg (narrow the range, or clamp the normal)'),
    ('a = 1\nb = 2\na = 3\n',
     "r.gfr:3:1: 'a' is defined twice (first at line 1)"),
    ('camera {\n  fov 30deg\n  fov 40deg\n}\n',
     "r.gfr:3:3: camera sets 'fov' twice (first at line 2)"),
    ('camera {\n}\nlight {\n}\ncamera {\n}\n',
     'r.gfr:5:1: a second camera block (the first is at r.gfr:1:1)'),
    ('object cup {\n  asset "a"\n}\nobject cup {\n  asset "b"\n}\n',
     'r.gfr:4:8: two object blocks are named cup (the first is at r.gfr:1:1)'),
    ('s = 0deg..10deg per object\ncamera {\n  azimuth s\n}\n',
     "r.gfr:3:11: 's' is drawn per object, but camera azimuth is drawn once per image"),
    ('s = 0deg..10deg per object\nt = s\n',
     "r.gfr:2:5: 't' is drawn once per image but uses 's', which is drawn per object (write t = ... per object)"),
    ('object cup {\n  asset "cup-0000"\n  count 2..5\n}\n',
     'r.gfr:3:9: cup count must be a whole number, got 2..5 (for a range of whole numbers write 2 to 5)'),
    ('object cup {\n  asset "cup-0000"\n  shape "cup-0001"\n}\n',
     'r.gfr:3:3: cup sets asset and shape: asset gives both codes; for another appearance write asset X wearing Y'),
    ('object cup {\n  scale 3cm\n}\n',
     'r.gfr:1:1: object cup needs its codes: asset CODE, or shape CODE and appearance CODE'),
    ('object cup {\n  shape "a"\n}\n',
     'r.gfr:1:1: object cup has a shape but no appearance (add appearance CODE, or write asset X wearing Y)'),
    ('object cup {\n  asset "cup-0000"\n  on floor\n  at (1cm, 2cm, 3cm)\n}\n',
     'r.gfr:4:6: cup at needs (x, y): its height comes from the floor'),
    ('object cup {\n  asset "cup-0000"\n  at (1cm, 2cm)\n}\n',
     "r.gfr:3:6: cup at needs (x, y, z), or add 'on floor' to rest it on the floor"),
    ('object cup {\n  asset "cup-0000"\n  at (1cm, 2cm, 0)\n  inside (0, 0, 0)..(1m, 1m, 1m)\n}\n',
     'r.gfr:4:3: cup sets at and inside: give a position or a region, not both'),
    ('object cup {\n  asset "cup-0000"\n  inside (1cm, 2cm, 0)\n}\n',
     'r.gfr:3:10: cup inside needs a box like (-10cm, -10cm)..(10cm, 10cm), got (1cm, 2cm, 0)'),
    ('object cup {\n  asset "cup-0000"\n  yaw 0deg\n}\nsweep {\n  cup.yw 0deg, 90deg\n}\n',
     "r.gfr:6:3: unknown parameter 'cup.yw' (did you mean 'cup.yaw'?)"),
    ('object cup {\n  asset "cup-0000"\n  yaw 0deg\n}\nsweep {\n  cup.yaw 0deg, 90deg\n  camera.fov 30deg\n  mode zip\n}\n',
     'r.gfr:5:1: mode zip walks both lists together, but cup.yaw has 2 values and camera.fov has 1'),
    ('object cup {\n  asset "cup-0000"\n  yaw 0deg\n}\nsweep {\n  cup.yaw 0deg\n  cup.roll 0deg\n  cup.pitch 0deg\n}\n',
     'r.gfr:8:3: a sweep varies one or two parameters (use another sweep block for more)'),
    ('sweep {\n}\n',
     'r.gfr:1:1: a sweep block names one or two parameters and their values (for example: camera.azimuth 0deg..315deg steps 8)'),
    ('object cup {\n  asset "cup-0000"\n  yaw 0deg\n}\nsweep {\n  cup.yaw 0deg..90deg\n}\n',
     'r.gfr:6:11: a sweep takes fixed values, got the range 0deg..90deg (for a series write 0deg..90deg steps N)'),
    ('sweep {\n  camera.fov 30deg\n  mode zipped\n}\n',
     "r.gfr:3:8: sweep mode takes one of grid, zip, got zipped (did you mean 'zip'?)"),
    ('spin 3deg\n',
     "r.gfr:1:1: unknown top-level setting 'spin' (to define a constant write spin = ...)"),
    ('camera 3\n',
     "r.gfr:1:1: unknown top-level setting 'camera' (camera is a block: camera { ... })"),
    ('camera main {\n}\n',
     'r.gfr:1:8: a camera block takes no name, got main'),
    ('object {\n  asset "a"\n}\n',
     'r.gfr:1:1: an object block is named with one word, like object cup { ... } (the name is the class label; for another label write label "hex nut")'),
    ('object "hex nut" {\n  asset "a"\n}\n',
     'r.gfr:1:8: an object block is named with one word, like object cup { ... } (the name is the class label; for another label write label "hex nut")'),
    ('dataset {\n  outputs image, maks\n}\n',
     "r.gfr:2:18: outputs takes one of image, mask, amodal, depth, normals, got maks (did you mean 'mask'?)"),
    ('dataset {\n  images 1 to 5\n}\n',
     'r.gfr:2:10: dataset images must be a fixed value, not drawn; got 1 to 5'),
    ('a = pick [1cm, "x"]\n',
     'r.gfr:1:16: the options of a pick must be alike: "x" is not like 1cm'),
    ('a = (1cm, 2deg)\n',
     'r.gfr:1:11: this vector mixes a length and an angle'),
    ('camera {\n  fov 10deg..20deg steps 3\n}\n',
     "r.gfr:2:7: 'steps' makes a series of values for a sweep block (for a random value write a..b)"),
    ('object cup {\n  shape "a" wearing "b"\n  appearance "c"\n}\n',
     'r.gfr:2:9: \'wearing\' belongs in an object\'s asset setting (asset "cup-0001" wearing "bowl-0002")'),
    ('c = prior\n',
     "r.gfr:1:5: a constant holds a value; write code expressions (prior, lerp, slerp, shift) in an object's settings (a constant may hold a code's name or a pick of names)"),
    ('object cup {\n  asset lerp ["a": 1]\n  \n}\n',
     'r.gfr:2:9: lerp blends two or more named codes'),
    ('object cup {\n  asset lerp ["a", "a"]\n  \n}\n',
     "r.gfr:2:20: 'a' appears twice in this lerp"),
    ('object cup {\n  asset lerp ["a": -1..1, "b"]\n  \n}\n',
     'r.gfr:2:20: a lerp weight must be >= 0, but -1..1 can give -1 (narrow the range, or clamp the normal)'),
    ('a = pick [1: 0, 2: 0]\n',
     'r.gfr:1:5: a pick needs at least one weight above 0'),
    ('a = 1\nb = a..2\n',
     'r.gfr:2:5: a range takes numbers written out, got a'),
    ('camera {\n  fov 30deg\n  focal 100px\n}\n',
     'r.gfr:3:3: camera sets fov and focal: give one of them'),
    ('camera {\n  position (1m, 0, 0)\n  distance 1m\n}\n',
     'r.gfr:3:3: camera sets position and distance: a camera is placed by position, or by distance, elevation and azimuth around its target, not both'),
    ('camera {\n  size 10000x10\n}\n',
     'r.gfr:2:3: an image size is 1 to 8192 pixels a side, got 10000x10'),
    ('backdrop {\n  top #ffffff\n}\n',
     'r.gfr:1:1: a gradient needs both top and bottom; bottom is missing'),
    ('backdrop {\n  floor 3\n}\n',
     'r.gfr:2:9: backdrop floor needs a colour like #a1b2c3, got 3'),
    ('a = 1 per scene\n',
     "r.gfr:1:11: a constant is drawn 'per image' or 'per object', got 'per scene'"),
    ('camera {\n  fov 30deg, 40deg\n}\n',
     "r.gfr:2:14: 'fov' takes one value, got 2"),
    ('light {\n  shadows on\n}\n',
     'r.gfr:2:11: light shadows needs yes or no, got on'),
    ('a = normal 0 sd -1\n',
     'r.gfr:1:17: a spread (sd) must be >= 0, got -1'),
    ('object cup {\n  asset "cup-0000"\n  label " "\n}\n',
     'r.gfr:3:9: a class label cannot be empty'),
    ('camera {\n  elevation 90deg\n}\n',
     'r.gfr:2:13: camera elevation must be between -90deg and 90deg (both excluded), got 90deg'),
    ('camera.fov 30deg\n',
     "r.gfr:1:1: unknown top-level setting 'camera.fov' (known: model)"),
    ('camera {\n  target.x 1cm\n}\n',
     "r.gfr:2:3: unknown camera setting 'target.x' (did you mean 'target'?)"),
]


@pytest.mark.parametrize(("text", "message"), SYNTAX)
def test_syntax_errors_say_where_and_what_in_words(text, message):
    with pytest.raises(RecipeError) as caught:
        parse_text(text, "r.gfr")
    assert caught.value.one_line() == message


@pytest.mark.parametrize(("text", "message"), SEMANTIC)
def test_semantic_errors_say_where_and_what(text, message, monkeypatch, tmp_path):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(RecipeError) as caught:
        loads(text, path="r.gfr")
    assert caught.value.one_line() == message


def test_the_context_is_the_offending_line_and_a_caret_under_the_column():
    with pytest.raises(RecipeError) as caught:
        loads('object cup {\n\tasset "a"\n\tscale -2cm\n}\n', path="r.gfr")
    assert caught.value.where == "r.gfr:3:8"
    assert caught.value.context == "  \tscale -2cm\n  \t      ^"  # the tab is kept so the caret lines up


def test_errors_in_an_included_file_name_that_file(tmp_path):
    (tmp_path / "parts").mkdir()
    (tmp_path / "parts" / "lamp.gfr").write_text("light {\n  strength -1\n}\n")
    with pytest.raises(RecipeError) as caught:
        loads('include "parts/lamp.gfr"\n', path=tmp_path / "top.gfr")
    assert caught.value.one_line() == f"{tmp_path}/parts/lamp.gfr:2:12: light strength must be >= 0, got -1"


def test_include_cycles_are_reported_with_the_chain(tmp_path):
    (tmp_path / "a.gfr").write_text('include "b.gfr"\n')
    (tmp_path / "b.gfr").write_text('\ninclude "a.gfr"\n')
    with pytest.raises(RecipeError) as caught:
        loads((tmp_path / "a.gfr").read_text(), path=tmp_path / "a.gfr")
    assert caught.value.one_line() == f"{tmp_path}/b.gfr:2:1: include cycle: a.gfr -> b.gfr -> a.gfr"


def test_a_file_included_twice_is_refused(tmp_path):
    (tmp_path / "c.gfr").write_text("x = 1\n")
    with pytest.raises(RecipeError) as caught:
        loads('include "c.gfr"\ninclude "./c.gfr"\n', path=tmp_path / "top.gfr")
    assert caught.value.one_line() == (f"{tmp_path}/top.gfr:2:1: ./c.gfr is already included "
                                       f"(at {tmp_path}/top.gfr:1:1)")


def test_a_missing_include_is_an_error_at_the_include(tmp_path):
    with pytest.raises(RecipeError) as caught:
        loads('x = 1\ninclude "nope.gfr"\n', path=tmp_path / "top.gfr")
    assert caught.value.where == f"{tmp_path}/top.gfr:2:1"
    assert caught.value.message == f"no recipe file {tmp_path}/nope.gfr"


@pytest.mark.parametrize("path", ["../outside.gfr", "/etc/passwd", "sub/../../x.gfr", "~/x.gfr"])
def test_include_paths_may_not_leave_the_recipes_folder(tmp_path, path):
    folder = tmp_path / "recipes"
    folder.mkdir()
    (tmp_path / "outside.gfr").write_text("x = 1\n")
    with pytest.raises(RecipeError) as caught:
        loads(f'include "{path}"\n', path=folder / "top.gfr")
    assert caught.value.where == f"{folder}/top.gfr:1:1"
    assert "outside the recipe's folder" in caught.value.message or "relative" in caught.value.message


def test_a_symlink_out_of_the_folder_is_refused(tmp_path):
    folder = tmp_path / "recipes"
    folder.mkdir()
    (tmp_path / "secret.gfr").write_text("x = 1\n")
    (folder / "link.gfr").symlink_to(tmp_path / "secret.gfr")
    with pytest.raises(RecipeError, match="outside the recipe's folder"):
        loads('include "link.gfr"\n', path=folder / "top.gfr")


def test_the_model_path_may_not_leave_the_folder_either(tmp_path):
    with pytest.raises(RecipeError) as caught:
        loads('model "../models/m.gfm"\n', path=tmp_path / "r" / "top.gfr")
    assert caught.value.where == f"{tmp_path}/r/top.gfr:1:7"
    assert caught.value.message == (f"the model file ../models/m.gfm is outside the recipe's "
                                    f"folder {tmp_path}/r")


@pytest.mark.parametrize("text", ['model "models/a\x00b.gfm"\n', 'include "a\x00.gfr"\n'])
def test_a_path_with_a_nul_character_is_a_recipe_error(tmp_path, text):
    # Found by tests/test_recipe_fuzz.py: the OS refuses such a path with a bare ValueError.
    with pytest.raises(RecipeError, match="NUL character") as caught:
        loads(text, path=tmp_path / "top.gfr")
    assert caught.value.where.startswith(f"{tmp_path}/top.gfr:1:")


def test_a_recipe_file_that_is_not_text_is_refused(tmp_path):
    from genfield.recipe import load_recipe

    (tmp_path / "bin.gfr").write_bytes(b"x = 1\n\xff\xfe")
    with pytest.raises(RecipeError, match=r"is not UTF-8 text \(byte 6\)"):
        load_recipe(tmp_path / "bin.gfr")
    with pytest.raises(RecipeError, match="no recipe file"):
        load_recipe(tmp_path / "missing.gfr")


CODES = 'object cup {\n  asset pick ["cup-0000", "cpu-0001"]\n}\n'


def test_code_names_are_checked_against_the_model_with_did_you_mean(tmp_path):
    recipe = loads(CODES, path=tmp_path / "r.gfr")
    with pytest.raises(RecipeError) as caught:
        check_codes(recipe, toy_codebook())
    assert caught.value.one_line() == (f"{tmp_path}/r.gfr:2:27: the model has no code named "
                                       "'cpu-0001' (did you mean 'cup-0001'?)")


def test_drawing_an_unknown_code_name_is_the_same_error(tmp_path):
    recipe = loads(CODES.replace('"cup-0000", ', ""), path=tmp_path / "r.gfr")
    with pytest.raises(RecipeError, match="no code named 'cpu-0001'"):
        draw_scene(recipe, toy_codebook(), 0, 0)


def test_code_dimensions_and_vector_lengths_are_checked_against_the_model(tmp_path):
    shift = loads('object a {\n  shape "cup-0000" shift dim 6 by 1\n  appearance "cup-0001"\n}\n',
                  path=tmp_path / "r.gfr")
    with pytest.raises(RecipeError) as caught:
        check_codes(shift, toy_codebook())  # 6 shape dimensions: 0 to 5
    assert caught.value.message == ("the model's shape code has 6 dimensions (0 to 5); dim 6 is "
                                    "past them")
    vector = loads('object a {\n  shape (1, 2)\n  appearance "cup-0001"\n}\n', path=tmp_path / "r.gfr")
    with pytest.raises(RecipeError, match="the model's shape code has 6 numbers; this vector has 2"):
        check_codes(vector, toy_codebook())


def test_an_impossible_placement_names_the_objects(tmp_path):
    text = ("object washer {\n  asset \"washer-0000\"\n  count 3\n  scale 4cm\n  on floor\n"
            "  inside (-10cm, -10cm)..(10cm, 10cm)\n}\nlayout {\n  tries 20\n}\n")
    recipe = loads(text, path=tmp_path / "r.gfr")
    with pytest.raises(RecipeError) as caught:
        draw_scene(recipe, None, 0, 0)
    assert caught.value.where == f"{tmp_path}/r.gfr:1:1"
    assert caught.value.message == ("cannot place washer #2 apart from washer #1: its bounding "
                                    "sphere overlaps in all 20 tries of each of 8 starts")


def test_an_object_too_big_for_its_region_says_so(tmp_path):
    text = ('object bowl {\n  asset "bowl-0000"\n  scale 10cm\n  on floor\n'
            "  inside (-5cm, -5cm)..(5cm, 5cm)\n}\n")
    with pytest.raises(RecipeError, match=r"bowl \(bounding radius 17.3205cm\) does not fit inside "
                       r"its region along x \(-5cm..5cm\)"):
        draw_scene(loads(text, path=tmp_path / "r.gfr"), None, 0, 0)


def test_fixed_positions_that_overlap_fail_at_once(tmp_path):
    text = ('object a {\n  asset "cup-0000"\n  at (0, 0, 0)\n}\n'
            'object b {\n  asset "cup-0000"\n  at (1cm, 0, 0)\n}\n')
    with pytest.raises(RecipeError, match="cannot place b #1 apart from a #1: its bounding sphere "
                       "overlaps at its fixed position"):
        draw_scene(loads(text, path=tmp_path / "r.gfr"), None, 0, 0)


def test_overrides_are_checked_by_name_and_bounds(tmp_path):
    recipe = loads('object cup {\n  asset "cup-0000"\n}\n', path=tmp_path / "r.gfr")
    with pytest.raises(RecipeError) as caught:
        draw_scene(recipe, None, 0, 0, {"cup.yw": 1.0})
    assert caught.value.one_line() == f"{tmp_path}/r.gfr: unknown parameter 'cup.yw' (did you mean 'cup.yaw'?)"
    with pytest.raises(RecipeError, match=r"cup.scale must be > 0, got -1cm"):
        draw_scene(recipe, None, 0, 0, {"cup.scale": -0.01})
    with pytest.raises(RecipeError, match="cup.count must be a whole number, got 1.5"):
        draw_scene(recipe, None, 0, 0, {"cup.count": 1.5})
    with pytest.raises(RecipeError, match="camera.fov must be between 0deg and 180deg"):
        draw_scene(recipe, None, 0, 0, {"camera.fov": 3.2})


def test_a_camera_straight_above_its_target_with_up_along_z_cannot_be_placed(tmp_path):
    recipe = loads("camera {\n  position (0, 0, 1m)\n}\n", path=tmp_path / "r.gfr")
    with pytest.raises(RecipeError, match="the camera cannot be placed: camera up vector is "
                       "parallel to the viewing direction"):
        draw_scene(recipe, None, 0, 0)


def test_the_cli_prints_one_line_and_the_caret(tmp_path, capsys):
    from genfield import cli

    path = tmp_path / "bad.gfr"
    path.write_text("camera {\n  fov 200deg\n}\n")
    assert cli.main(["check", str(path)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert err == [f"genfield: error: {path}:2:7: camera fov must be between 0deg and 180deg "
                   "(both excluded), got 200deg", "    fov 200deg", "        ^"]


def test_deep_nesting_is_refused_before_any_recursion():
    deep = "a = " + "(" * 500 + "1, 2" + "), 1" * 499 + ")\n"
    with pytest.raises(RecipeError, match="this value is nested more than 48 deep"):
        parse_text(deep, "r.gfr")


def test_placement_stops_at_its_budget(tmp_path, monkeypatch):
    import genfield.recipe.draw as draw

    monkeypatch.setattr(draw, "BUDGET", 500)
    text = ('object a {\n  asset "x"\n  count 5\n  scale 3cm\n  on floor\n'
            "  inside (-6cm, -6cm)..(6cm, 6cm)\n}\nlayout {\n  tries 100000\n}\n")
    with pytest.raises(RecipeError, match=r"placement gave up after 500 candidate positions "
                       r"\(a #2 was being placed\)"):
        draw_scene(loads(text, path=tmp_path / "r.gfr"), None, 0, 0)
