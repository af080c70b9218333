"""Errors a user can act on.

Every problem with a user's input ends in one :class:`InputError` that names
the file, the line and the key, says what is wrong and, where one exists,
what would be right (a close match from the names that do exist).  The
command line prints it without a traceback and exits with status 2.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from typing import Iterable


@dataclass
class Where:
    """A place in a user's file: path, 1-based line, and the key path."""

    file: str | None = None
    line: int | None = None
    key: str | None = None

    def __str__(self) -> str:
        parts = []
        if self.file:
            parts.append(self.file if self.line is None else f"{self.file}:{self.line}")
        elif self.line is not None:
            parts.append(f"line {self.line}")
        if self.key:
            parts.append(f"at '{self.key}'")
        return " ".join(parts)


class InputError(Exception):
    """Bad input: a declaration, an inequality or an option that cannot be used."""

    #: longest message and hint kept (a value blown up by YAML aliases must not make a huge message)
    MAX_TEXT = 1200

    def __init__(self, message: str, where: Where | None = None, hint: str | None = None):
        self.message = _cut(str(message), self.MAX_TEXT)
        self.where = where or Where()
        self.hint = _cut(str(hint), self.MAX_TEXT // 2) if hint is not None else None
        super().__init__(str(self))

    def __str__(self) -> str:
        loc = str(self.where)
        text = f"{loc}: {self.message}" if loc else self.message
        if self.hint:
            text += f" ({self.hint})"
        return text


def _cut(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 30] + f" … ({len(text) - n + 30} more characters)"


class ModelTooLarge(InputError):
    """A model would exceed a size limit the user can raise."""


def suggest(name: str, choices: Iterable[str]) -> str | None:
    """A 'did you mean' hint for *name* among *choices*, or None."""
    choices = [str(c) for c in choices]
    close = difflib.get_close_matches(str(name), choices, n=1, cutoff=0.6)
    if close:
        return f"did you mean '{close[0]}'?"
    if choices and len(choices) <= 12:
        return "expected one of: " + ", ".join(repr(c) for c in choices)
    return None
