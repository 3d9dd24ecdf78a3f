"""``python -m genfield``: the same as the ``genfield`` command."""

from genfield.cli import run

run()
