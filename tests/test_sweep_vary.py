"""The --vary PARAM=VALUES syntax."""

from __future__ import annotations

import pytest

from genfield.errors import UsageError
from genfield.sheets.vary import parse_vary


def test_range_with_steps_includes_both_ends():
    v = parse_vary("camera.azimuth=0..90:7")
    assert v.param == "camera.azimuth"
    assert v.values == (0.0, 15.0, 30.0, 45.0, 60.0, 75.0, 90.0)
    assert v.labels[:3] == ("0", "15", "30") and v.unit == ""


def test_list_and_single_value():
    assert parse_vary("obj.scale=0.5,1,2").values == (0.5, 1.0, 2.0)
    assert parse_vary("light.strength=1.25").values == (1.25,)
    assert parse_vary("x=-1..1e0:3").values == (-1.0, 0.0, 1.0)


def test_a_unit_written_once_covers_the_list():
    v = parse_vary("camera.azimuth=0..90deg:4")
    assert v.unit == "deg" and v.values == (0.0, 30.0, 60.0, 90.0)
    assert v.labels[-1] == "90deg" and v.title == "camera.azimuth (deg)"
    assert parse_vary("pos=10,20cm,30").unit == "cm"


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("azimuth", "PARAM=VALUES"),
        ("=1,2", "PARAM=VALUES"),
        ("a=", "PARAM=VALUES"),
        ("a=0..90", "step count"),
        ("a=0..90:x", "whole number"),
        ("a=0..90:1", "at least 2 steps"),
        ("a=1,,2", "expected a number"),
        ("a=1,two", "expected a number"),
        ("a=1furlong", "unknown unit"),
        ("a=1deg,2rad", "mixed units"),
    ],
)
def test_bad_values_name_the_option(text, message):
    with pytest.raises(UsageError) as err:
        parse_vary(text)
    line = err.value.one_line()
    assert message in line and line.startswith(f"--vary {text}")
