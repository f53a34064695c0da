"""Every deliberate exception scoremon raises.

Anything a user can fix raises a subclass of :class:`ScoremonError`; bugs stay ordinary
Python exceptions. The hierarchy::

    ScoremonError                 anything the user can act on (CLI exit code 2)
    ├── SpecError                 a spec file is unreadable or invalid; carries every problem
    ├── InputError                a table, file or column does not fit the spec; carries each misfit
    └── EngineError               the database refused a query; carries the purpose, engine and detail

:func:`cut` is how every message shows a value it quotes: long values are cut, so that one
hostile value (a number 5,000 digits long) cannot turn a message into a page.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Sequence


SHOWN_LENGTH = 80  # characters of a value a message shows


def cut(text: str, length: int = SHOWN_LENGTH) -> str:
    """``text`` itself, or its first ``length`` − 1 characters and "…" when it is longer.

    >>> cut("1" * 100, 10)
    '111111111…'
    """
    return text if len(text) <= length else text[:length - 1] + "…"


_LONG_WORD = re.compile(r"\S{%d,}" % (SHOWN_LENGTH + 1))


def cut_long_words(text: str) -> str:
    """``text`` with every run of more than :data:`SHOWN_LENGTH` non-blank characters :func:`cut`."""
    return _LONG_WORD.sub(lambda match: cut(match.group(0)), text)


class ScoremonError(Exception):
    """Base of every error a user can act on."""


@dataclass(frozen=True, order=True)
class Problem:
    """One thing wrong with a spec, located in its file.

    Ordered by (line, column) so that a list of problems reads top to bottom.
    """

    line: int
    column: int
    path: str
    message: str
    file: str = "<spec>"

    def __str__(self) -> str:
        # a value quoted in the message (a number 5,000 digits long, a key a page wide) is cut
        where = f"{self.file}:{self.line}:{self.column}"
        message = cut_long_words(self.message)
        return f"{where}: {cut(self.path)}: {message}" if self.path else f"{where}: {message}"


class SpecError(ScoremonError):
    """A spec could not be loaded or failed validation.

    ``problems`` holds every problem found, ordered by position in the file.
    """

    def __init__(self, problems: list[Problem]):
        self.problems = sorted(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


class InputError(ScoremonError):
    """The data handed to scoremon does not fit: a missing column, a wrong type, a bad path.

    ``message`` says what; ``problems`` (possibly empty) lists each misfit on its own, each
    saying where and how to fix it, e.g. ``InputError("the input does not fit the spec",
    ["column 'age' (feature 'age') is not in the input; did you mean 'Age'?"])``.
    """

    def __init__(self, message: str, problems: Sequence[str] = ()):
        self.message = message
        self.problems = tuple(problems)
        text = message + ":" + "".join(f"\n  - {p}" for p in self.problems) if self.problems else message
        super().__init__(text)


class EngineError(ScoremonError):
    """The database refused a query: ``purpose`` (what scoremon was doing), ``engine`` (which
    one) and ``detail`` (the first line of the driver's message). The driver's error is kept as
    ``__cause__``."""

    def __init__(self, purpose: str, engine: str, detail: str):
        self.purpose = purpose
        self.engine = engine
        self.detail = detail
        super().__init__(f"{engine}: {purpose} failed: {detail}")
