"""Suite-wide fixtures.

genfield turns on torch's flush-denormal mode (FTZ/DAZ, a process-wide CPU setting) while it
trains or renders (``genfield.compute.heavy_work``, which turns it off again on exit). A test
that sets it some other way must not leak it into the next: hypothesis refuses to run when
subnormal floats do not exist. Each test gets the CPU's default mode back.
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
