"""The recipe parser: a golden syntax tree for every construct, positions, comments."""

from __future__ import annotations

import dataclasses

import pytest
from lark import Token, Tree

from genfield.recipe import ast
from genfield.recipe.parser import parse_text


def one_value(text: str) -> ast.Expr:
    """The value of ``v TEXT`` as a setting."""
    (setting,) = parse_text(f"v {text}\n").statements
    assert isinstance(setting, ast.Setting)
    (value,) = setting.values
    return value


Q = ast.Quantity
T = ast.Text


@pytest.mark.parametrize(
    ("text", "tree"),
    [
        ("3cm", Q(3.0, "cm")),
        ("-25deg", Q(-25.0, "deg")),
        ("0.4rad", Q(0.4, "rad")),
        ("180px", Q(180.0, "px")),
        ("1.5m", Q(1.5, "m")),
        ("12mm", Q(12.0, "mm")),
        ("2.5e-1", Q(0.25, "")),
        ("160x120", ast.Dims(160, 120)),
        ("#A1b2C3", ast.Colour("#a1b2c3")),
        ('"cup-0001"', T("cup-0001")),
        ("spin", ast.Ref("spin")),
        ("yes", ast.Boolean(True)),
        ("no", ast.Boolean(False)),
        ("(1cm, 0, -2mm)", ast.Vector((Q(1, "cm"), Q(0, ""), Q(-2, "mm")))),
        ("0deg..360deg", ast.Uniform(Q(0, "deg"), Q(360, "deg"))),
        ("(-1cm, -2cm)..(1cm, 2cm)",
         ast.Uniform(ast.Vector((Q(-1, "cm"), Q(-2, "cm"))), ast.Vector((Q(1, "cm"), Q(2, "cm"))))),
        ("0deg..90deg steps 4", ast.Steps(Q(0, "deg"), Q(90, "deg"), 4)),
        ("2 to 5", ast.WholeRange(Q(2, ""), Q(5, ""))),
        ("normal 0deg sd 4deg", ast.Normal(Q(0, "deg"), Q(4, "deg"))),
        ("normal 1 sd 2 clamp -1..3", ast.Normal(Q(1, ""), Q(2, ""), (Q(-1, ""), Q(3, "")))),
        ("pick [2cm: 3, 5cm]",
         ast.Pick((ast.Item(Q(2, "cm"), Q(3, "")), ast.Item(Q(5, "cm"))))),
        ("prior", ast.Prior()),
        ("prior temperature 0.8", ast.Prior(Q(0.8, ""))),
        ("prior temperature 0.5..1", ast.Prior(ast.Uniform(Q(0.5, ""), Q(1, "")))),
        ('lerp ["a": 0..1, "b"]',
         ast.Mix((ast.Item(T("a"), ast.Uniform(Q(0, ""), Q(1, ""))), ast.Item(T("b"))), False)),
        ('slerp ["a": 1, "b": 2, "c": 3]',
         ast.Mix(tuple(ast.Item(T(n), Q(w, "")) for n, w in (("a", 1), ("b", 2), ("c", 3))), True)),
        ('"a" shift dim 3 by -0.5', ast.Shift(T("a"), 3, Q(-0.5, ""))),
        ('"a" shift dim 0 by 1 shift dim 2 by 0..1',
         ast.Shift(ast.Shift(T("a"), 0, Q(1, "")), 2, ast.Uniform(Q(0, ""), Q(1, "")))),
        ('"a" wearing "b"', ast.Wearing(T("a"), T("b"))),
        ('"a" shift dim 1 by 2 wearing prior temperature 0.3',
         ast.Wearing(ast.Shift(T("a"), 1, Q(2, "")), ast.Prior(Q(0.3, "")))),
        ("(0.1, -0.2, 0.3, 0.4)", ast.Vector(tuple(Q(x, "") for x in (0.1, -0.2, 0.3, 0.4)))),
    ],
)
def test_every_value_and_draw_has_its_golden_tree(text, tree):
    assert one_value(text) == tree


def test_statements_have_golden_trees():
    program = parse_text(
        'include "common/lamp.gfr"\n'
        'model "models/m.gfm"\n'
        "spin = 0deg..360deg per object\n"
        "camera {\n"
        "  size 64x48\n"
        "}\n"
        'object "hex nut" {\n'
        "}\n"
        "sweep {\n"
        "  camera.azimuth 0deg, 90deg\n"
        "}\n"
        "empty {}\n"
    )
    assert program.statements == (
        ast.Include("common/lamp.gfr"),
        ast.Setting("model", (T("models/m.gfm"),)),
        ast.Constant("spin", ast.Uniform(Q(0, "deg"), Q(360, "deg")), "object"),
        ast.Block("camera", None, (ast.Setting("size", (ast.Dims(64, 48),)),)),
        ast.Block("object", "hex nut", (), quoted=True),
        ast.Block("sweep", None, (ast.Setting("camera.azimuth", (Q(0, "deg"), Q(90, "deg"))),)),
        ast.Block("empty", None, ()),
    )


def test_lists_may_run_over_lines_inside_brackets():
    value = one_value('pick [\n  "a",\n  "b"\n]')
    assert value == ast.Pick((ast.Item(T("a")), ast.Item(T("b"))))


def test_positions_are_line_and_column_of_the_first_character():
    program = parse_text("# head\ncamera {\n  fov   40deg\n}\nx = (1cm, 2cm)\n", "r.gfr")
    block, constant = program.statements
    setting = block.settings[0]
    assert (block.pos.line, block.pos.column) == (2, 1)
    assert (setting.pos.line, setting.pos.column) == (3, 3)
    assert (setting.values[0].pos.line, setting.values[0].pos.column) == (3, 9)
    assert setting.values[0].pos.where == "r.gfr:3:9"
    assert setting.values[0].pos.text == "  fov   40deg"
    assert block.end_line == 4
    assert (constant.value.items[1].pos.line, constant.value.items[1].pos.column) == (5, 11)


def test_comments_are_kept_with_their_lines():
    program = parse_text("# one\nx = 1  # two\n\n  # three\ncamera {\n}\n# four")
    assert [(c.line, c.text, c.trailing) for c in program.comments] == [
        (1, "# one", False), (2, "# two", True), (4, "# three", False), (7, "# four", False)]


def test_colours_are_not_comments_and_line_ends_may_be_crlf():
    program = parse_text("backdrop {\r\n  colour #ffeedd  # warm\r\n}\r\n")
    (block,) = program.statements
    assert block.settings[0].values == (ast.Colour("#ffeedd"),)
    assert [c.text for c in program.comments] == ["# warm"]


def test_positions_do_not_take_part_in_equality():
    a = parse_text("x = 3cm\n")
    b = parse_text("\n\n   x   =   3cm   # moved\n")
    assert a.statements == b.statements
    assert a.statements[0].pos.line != b.statements[0].pos.line


def _walk(node):
    yield node
    if dataclasses.is_dataclass(node):
        for f in dataclasses.fields(node):
            value = getattr(node, f.name)
            for item in value if isinstance(value, tuple) else (value,):
                yield from _walk(item)


def test_nothing_past_the_parser_sees_a_lark_tree_or_token():
    text = open("recipes/kitchen-shelf.gfr", encoding="utf-8").read()
    for node in _walk(parse_text(text)):
        assert not isinstance(node, (Tree, Token)), node


def test_numbers_keep_their_spelling_for_the_formatter():
    q = one_value("3.50cm")
    assert (q.value, q.unit, q.literal, q.whole) == (3.5, "cm", "3.50cm", False)
    assert one_value("7").whole and not one_value("7.0").whole and not one_value("7deg").whole
