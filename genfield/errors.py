"""One error family for every kind of bad input, so the CLI can turn any of them into one line.

A GenfieldError says what was wrong, where (``file:line:column`` for recipes, a key path
for configs, a file name for meshes and model files) and, where it can, how to mend it.
The CLI prints ``genfield: error: <where>: <message>`` and exits with code 2; the optional
``context`` (a source line with a caret) is printed underneath.
"""

from __future__ import annotations

EXIT_BAD_INPUT = 2


class GenfieldError(Exception):
    """Root of every error genfield raises on purpose.

    Args:
        message: what was received and what was expected, in a person's words.
        where: the place: ``path:line:column``, ``path``, ``config.toml: train.steps``.
        hint: how to mend it, when that is not obvious from the message.
        context: extra lines shown under the message (an offending line and a caret).
    """

    kind = "error"

    def __init__(
        self,
        message: str,
        *,
        where: str | None = None,
        hint: str | None = None,
        context: str | None = None,
    ) -> None:
        super().__init__(message)
        self.message = message
        self.where = where
        self.hint = hint
        self.context = context

    def one_line(self) -> str:
        """The message as the single line the CLI prints (without the ``genfield:`` prefix)."""
        text = f"{self.where}: {self.message}" if self.where else self.message
        if self.hint:
            text = f"{text} ({self.hint})"
        return " ".join(text.split())  # never more than one line, whatever went in

    def __str__(self) -> str:
        return self.one_line()


class UsageError(GenfieldError):
    """Bad command-line arguments: conflicting flags, missing files, wrong formats."""


class NotBuiltError(GenfieldError):
    """A verb or feature that the project has not built yet."""


class RecipeError(GenfieldError):
    """A recipe that does not parse or does not check; ``where`` is ``file:line:column``."""


class ConfigError(GenfieldError):
    """A training config with unknown keys, wrong types or impossible values."""


class SourceError(GenfieldError):
    """A training source (built-in family or mesh file) that cannot be used."""


class ModelFileError(GenfieldError):
    """A model file that is missing, truncated, tampered with, foreign, or too new."""


class DatasetError(GenfieldError):
    """A dataset folder that cannot be written, resumed, merged or read."""
