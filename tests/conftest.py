"""Suite-wide fixtures.

genfield turns on torch's flush-denormal mode (FTZ/DAZ, a process-wide CPU setting) wherever
it trains or renders, because denormal floats slowed the network 2-3x. Tests share one
process, so every test after a torch test would inherit it; hypothesis then refuses to run
(it checks that subnormal floats exist). Each test gets the CPU's default mode back.
"""

from __future__ import annotations

import sys

import pytest


@pytest.fixture(autouse=True)
def _default_float_mode():
    yield
    torch = sys.modules.get("torch")
    if torch is not None:
        torch.set_flush_denormal(False)
