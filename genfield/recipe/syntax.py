"""Lark's syntax errors in a person's words: where, what came, what was expected, a caret.

The only place that reads lark's exceptions. ``UnexpectedCharacters`` (the lexer could not
start a word) is explained from the text at that spot: an unclosed quote, a colour or
comment written wrongly, an unknown unit. ``UnexpectedToken`` (and the end of the file) is
matched against examples of common mistakes with lark's ``match_examples``; what is left
gets "unexpected X; expected Y" with lark's terminal names replaced by what a person types.
"""

from __future__ import annotations

import re

from lark.exceptions import UnexpectedCharacters, UnexpectedInput, UnexpectedToken
from lark.lexer import PatternStr

from genfield.errors import RecipeError
from genfield.recipe.ast import Pos

UNITS = ("m", "cm", "mm", "deg", "rad", "px")
# Words people write for units that the language spells differently.
_UNIT_WORDS = {
    "deg": "deg", "degree": "deg", "degrees": "deg", "rad": "rad", "radian": "rad",
    "radians": "rad", "m": "m", "meter": "m", "meters": "m", "metre": "m", "metres": "m",
    "cm": "cm", "mm": "mm", "px": "px", "pixel": "px", "pixels": "px",
}
_WORDS = {
    "NUMBER": "a number",
    "DIMS": "an image size like 160x120",
    "STRING": 'a text in quotes like "cup-0001"',
    "NAME": "a name",
    "PATH": "a dotted parameter name",
    "COLOUR": "a colour like #a1b2c3",
    "_NL": "the end of the line",
    "$END": "the end of the file",
}
# Terminals that can start a value; when all are expected they are shown as "a value".
_VALUE_START = {"NUMBER", "DIMS", "STRING", "NAME", "COLOUR", "LPAR", "YES", "NO",
                "NORMAL", "PICK", "PRIOR", "LERP", "SLERP"}
_ORDER = ["_NL", "RBRACE", "COMMA", "RPAR", "RSQB", "COLON", "EQUAL", "LBRACE", "$value",
          "NAME", "PATH", "STRING", "NUMBER", "COLOUR", "DIMS"]

# Common mistakes, recognised by the parser state they leave (lark's match_examples).
_EXAMPLES: dict[str, list[str]] = {
    "colon": ["fov: 40deg\n", "camera {\n  fov: 40deg\n}\n"],
    "equals_in_block": ["camera {\n  fov = 40deg\n}\n"],
    "open_brace_line": ["camera { fov 40deg\n}\n"],
    "close_brace_line": ["camera {\n  fov 40deg }\n", "camera {\n  fov 40deg, 2 }\n"],
    "no_value": ["model\n", "camera {\n  fov\n}\n", "a =\n"],
    "after_number": ["a = 3 cm\n", "camera {\n  fov 40 deg\n}\n", "a = (1 cm, 2)\n",
                     "camera {\n  at (1 cm, 2)\n}\n"],
    "missing_comma": ["a = (1cm 2cm)\n", "camera {\n  at (1cm 2cm)\n}\n",
                      "a = pick [1 2]\n", "a = 1 2\n", "camera {\n  fov 1 2\n}\n"],
    "paren_not_closed": ["a = (1cm, 2cm\n", "camera {\n  at (1cm, 2cm\n}\n"],
    "range_end": ["a = 1..\n", "camera {\n  fov 1deg..\n}\n"],
    "list_not_closed": ["a = pick [1, 2\nb = 3\n", "camera {\n  at pick [1, 2\n}\n"],
    "stray_close": ["}\n", "a = 3\n}\n"],
    "vector_line": ["a = (1cm,\n 2cm)\n", "camera {\n  at (1cm,\n 2cm)\n}\n"],
}
_MESSAGES = {
    "colon": "a setting is written 'name value' without ':'",
    "equals_in_block": "'=' defines a constant outside blocks; inside a block write 'name value'",
    "open_brace_line": "start a new line after '{': each setting goes on a line of its own",
    "close_brace_line": "put the closing '}' on a line of its own",
    "no_value": "this needs a value",
    "missing_comma": "separate the values with ','",
    "paren_not_closed": "a '(' is not closed with ')' on this line",
    "range_end": "a range needs its second end, like 1cm..3cm",
    "list_not_closed": "a '[' is not closed with ']'",
    "stray_close": "this '}' closes no block",
    "vector_line": "a vector's parts are written on one line",
}


def _error(message: str, pos: Pos, hint: str | None = None) -> RecipeError:
    return RecipeError(message, where=pos.where, hint=hint, context=pos.context())


def _pos(file: str, lines: list[str], line: int, column: int) -> Pos:
    text = lines[line - 1] if 0 < line <= len(lines) else ""
    return Pos(file, line, column, text)


def _end_pos(file: str, lines: list[str]) -> Pos:
    """The end of the last line that holds anything."""
    for n in range(len(lines), 0, -1):
        if lines[n - 1].strip():
            return _pos(file, lines, n, len(lines[n - 1].rstrip()) + 1)
    return _pos(file, lines, 1, 1)


def _word(name: str) -> str:
    from genfield.recipe.parser import lark_parser

    if name in _WORDS:
        return _WORDS[name]
    try:
        pattern = lark_parser().get_terminal(name).pattern
    except KeyError:
        return name.lower()
    return f"'{pattern.value}'" if isinstance(pattern, PatternStr) else name.lower()


def expected_words(expected: set[str]) -> str:
    """A short list of what could have come, in a person's words."""
    names = set(expected)
    if len(names & _VALUE_START) >= 6:
        names = (names - _VALUE_START) | {"$value"}
    ranked = sorted(names, key=lambda n: (_ORDER.index(n) if n in _ORDER else len(_ORDER), n))
    words = ["a value" if n == "$value" else _word(n) for n in ranked]
    if len(words) > 5:
        words = words[:5] + ["..."]
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " or " + words[-1]


def _got(token) -> str:
    if token.type in ("$END", "<EOF>"):
        return "the end of the file"
    if token.type == "_NL":
        return "the end of the line"
    return f"'{token}'"


def syntax_error(err: UnexpectedInput, text: str, file: str) -> RecipeError:
    """The RecipeError for one lark error in ``text`` (already normalised)."""
    lines = text.split("\n")
    if isinstance(err, UnexpectedCharacters):
        return _bad_characters(err, lines, file)
    if isinstance(err, UnexpectedToken) and err.token.type != "$END":
        pos = _pos(file, lines, err.line, err.column)
        if err.token.type == "_NL":  # lark places a line end at its first character
            pos = _pos(file, lines, err.line, len(lines[err.line - 1].rstrip()) + 1)
    else:
        pos = _end_pos(file, lines)
        unclosed = _unclosed(text, file, lines)
        if unclosed is not None:
            return unclosed
    return _bad_token(err, pos, lines, file)


def _bad_token(err: UnexpectedInput, pos: Pos, lines: list[str], file: str) -> RecipeError:
    from genfield.recipe.parser import lark_parser

    token = err.token  # type: ignore[attr-defined]
    expected = set(getattr(err, "expected", ()) or ())
    # use_accepts=False: lark 1.3.1's accepts comparison logs with a format that fails on
    # LALR parser states; the state (stack depth and top) and the token type decide instead.
    label = err.match_examples(lark_parser().parse, _EXAMPLES, token_type_match_fallback=True,
                               use_accepts=False)
    word = str(token)
    if token.type in _CLOSERS:
        opened = _open_bracket(lines, err.line, err.column)  # type: ignore[attr-defined]
        if opened is None and token.type != "RBRACE":
            return _error(f"this '{word}' has no '{_OPENERS[_CLOSERS[token.type]]}' to close", pos)
        if opened is not None and opened[0] != _CLOSERS[token.type]:
            want = {"LPAR": ")", "LSQB": "]", "LBRACE": "}"}[opened[0]]
            return _error(f"this '{word}' does not match the '{_OPENERS[opened[0]]}' opened at "
                          f"{opened[1]}:{opened[2]}", pos, hint=f"close it with '{want}'")
    only_a_name = "NAME" in expected and not expected & {"NUMBER", "STRING"}
    if token.type not in ("NAME", "$END", "_NL") and word.isalpha() and only_a_name:
        return _error(f"'{word}' is a reserved word of the recipe language", pos,
                      hint="choose another name")
    if label == "after_number" and token.type == "NAME":
        if word.lower() in _UNIT_WORDS:
            before = _LAST_NUMBER.search(pos.text[: pos.column - 1])
            number = before.group(1) if before else "40"
            unit = _UNIT_WORDS[word.lower()]
            return _error(f"write the unit right after the number, with no space: "
                          f"{number}{unit}", pos)
        return _error(f"unexpected {_got(token)} after a number", pos,
                      hint=f"units are {', '.join(UNITS)}, written right after the number; "
                      "separate values with ','")
    if label == "no_value":
        before = _LAST_WORD.search(pos.text[: pos.column - 1])
        if before:
            return _error(f"{before.group(1)} needs a value", pos)
    if label in _MESSAGES and label != "after_number":
        return _error(f"{_MESSAGES[label]}; got {_got(token)}", pos)
    return _error(f"expected {expected_words(expected)}; got {_got(token)}", pos)


_LAST_WORD = re.compile(r"([A-Za-z_][A-Za-z0-9_.]*)\s*=?\s*$")
_LAST_NUMBER = re.compile(r"(-?[0-9]+(\.[0-9]+)?([eE][+-]?[0-9]+)?)\s*$")
_BAD_NUMBER = re.compile(r"-?[0-9]+(\.[0-9]+)?([eE][+-]?[0-9]+)?([A-Za-z_][A-Za-z0-9_]*)")
_BAD_HASH = re.compile(r"#[0-9A-Za-z_]*")


def _bad_characters(err: UnexpectedCharacters, lines: list[str], file: str) -> RecipeError:
    pos = _pos(file, lines, err.line, err.column)
    rest = pos.text[pos.column - 1 :]
    char = rest[:1] or "\n"
    if char == '"':
        return _error("this text has no closing '\"' on its line", pos)
    if char == "#":
        word = _BAD_HASH.match(rest).group(0)  # type: ignore[union-attr]
        if len(word) > 1 and all(c in "0123456789abcdefABCDEF" for c in word[1:]):
            return _error(f"a colour is '#' and six hex digits, like #a1b2c3; got {word}", pos)
        return _error("a comment starts with '#' and a space", pos, hint=f"write '# {rest[1:]}'")
    bad = _BAD_NUMBER.match(rest)
    if bad:
        unit = bad.group(3)
        if unit.startswith("x"):
            return _error(f"an image size is written like 160x120; got {bad.group(0)}", pos)
        known = _UNIT_WORDS.get(unit.lower())
        hint = f"write {bad.group(0)[: -len(unit)]}{known}" if known else f"units are {', '.join(UNITS)}"
        return _error(f"unknown unit '{unit}' in {bad.group(0)}", pos, hint=hint)
    if char == ".":
        return _error("a '.' belongs in a number (0.5), a range (1..2) or a parameter name "
                      "(camera.fov)", pos)
    shown = repr(char) if char.isprintable() else f"U+{ord(char):04X}"
    return _error(f"unexpected character {shown}", pos,
                  hint="a recipe holds names, numbers with units, \"texts\", #colours, "
                  "( ) [ ] { } , : = and .. ; a comment starts with '# '")


_CLOSERS = {"RPAR": "LPAR", "RSQB": "LSQB", "RBRACE": "LBRACE"}
_OPENERS = {"LPAR": "(", "LSQB": "[", "LBRACE": "{"}


def _open_bracket(lines: list[str], line: int, column: int) -> tuple[str, int, int] | None:
    """The innermost bracket still open just before (line, column)."""
    from genfield.recipe.parser import lark_parser

    text = "\n".join(lines[: line - 1] + [lines[line - 1][: column - 1]]) + "\n"
    stack: list[tuple[str, int, int]] = []
    try:
        for tok in lark_parser().lex(text):
            if tok.type in _OPENERS:
                stack.append((tok.type, tok.line, tok.column))
            elif tok.type in _CLOSERS and stack:
                stack.pop()
    except UnexpectedInput:
        return None
    return stack[-1] if stack else None


def _unclosed(text: str, file: str, lines: list[str]) -> RecipeError | None:
    """At the end of the file: the innermost bracket or block still open, if any."""
    from genfield.recipe.parser import lark_parser

    stack: list[tuple[str, int, int]] = []
    try:
        for tok in lark_parser().lex(text + "\n"):
            if tok.type in ("LBRACE", "LPAR", "LSQB"):
                stack.append((tok.type, tok.line, tok.column))
            elif tok.type in ("RBRACE", "RPAR", "RSQB") and stack:
                stack.pop()
    except UnexpectedInput:
        return None
    if not stack:
        return None
    kind, line, column = stack[-1]
    opened = _pos(file, lines, line, column)
    end = _end_pos(file, lines)
    if kind == "LBRACE":
        return _error(f"the block opened at line {line} is not closed", end,
                      hint="add '}' on a line of its own")
    what = "(" if kind == "LPAR" else "["
    close = ")" if kind == "LPAR" else "]"
    return _error(f"the '{what}' opened at {opened.line}:{opened.column} is not closed", end,
                  hint=f"add '{close}'")
