"""The ``--vary PARAM=VALUES`` syntax of ``genfield sweep``.

VALUES is one of (our own syntax)::

    A..B:N      N values evenly spaced from A to B, both ends included   0..90:7
    V1,V2,...   the listed values, in order                             0.5,1,2
    V           one value                                               45

Any number may carry one of the recipe language's units (``deg``, ``rad``, ``m``, ``cm``,
``mm``, ``px``); a unit written once applies to every number of the list (``0..90deg:7`` =
``0deg..90deg:7``), and two different units in one list are refused. The step count N is a
bare integer >= 2. The recipe then checks each value against the parameter's unit and bounds.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from genfield.errors import UsageError

UNITS = ("deg", "rad", "m", "cm", "mm", "px")
_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([a-z]*)\s*$")


@dataclass(frozen=True)
class Vary:
    """One swept parameter: its dotted name, values (floats, in ``unit``), and their labels."""

    param: str
    values: tuple[float, ...]
    unit: str = ""  # one of UNITS, or "" for a plain number

    @property
    def labels(self) -> tuple[str, ...]:
        """The values as the sheet's axis labels: three significant digits and the unit."""
        return tuple(f"{v:.3g}{self.unit}" for v in self.values)

    @property
    def title(self) -> str:
        return f"{self.param} ({self.unit})" if self.unit else self.param


def _number(text: str, where: str) -> tuple[float, str]:
    match = _NUMBER.match(text)
    if not match:
        raise UsageError(f"{where}: expected a number, got {text!r}",
                         hint="write values as 0..90:7, 0.5,1,2 or 45")
    unit = match.group(2)
    if unit and unit not in UNITS:
        raise UsageError(f"{where}: unknown unit {unit!r} in {text!r}",
                         hint=f"units are {', '.join(UNITS)}")
    return float(match.group(1)), unit


def parse_vary(text: str) -> Vary:
    """``PARAM=VALUES`` to a Vary; any malformed part is a UsageError naming the option."""
    where = f"--vary {text}"
    param, eq, values = text.partition("=")
    param = param.strip()
    if not eq or not param or not values.strip():
        raise UsageError(f"{where}: expected PARAM=VALUES", hint="e.g. --vary camera.azimuth=0..90:7")
    values = values.strip()
    if ".." in values:
        head, colon, steps = values.rpartition(":")
        if not colon or ".." not in head:
            raise UsageError(f"{where}: a range needs a step count, as in A..B:N",
                             hint="e.g. 0..90:7 gives 0, 15, ..., 90")
        a_text, _, b_text = head.partition("..")
        try:
            count = int(steps)
        except ValueError:
            raise UsageError(f"{where}: the step count must be a whole number, got {steps!r}") from None
        if count < 2:
            raise UsageError(f"{where}: a range needs at least 2 steps, got {count}")
        (a, ua), (b, ub) = _number(a_text, where), _number(b_text, where)
        numbers = [(float(v), "") for v in np.linspace(a, b, count)]
        units = {u for u in (ua, ub) if u}
    else:
        parsed = [_number(part, where) for part in values.split(",")]
        numbers = parsed
        units = {u for _, u in parsed if u}
    if len(units) > 1:
        raise UsageError(f"{where}: mixed units {', '.join(sorted(units))} in one list")
    return Vary(param, tuple(v for v, _ in numbers), units.pop() if units else "")
