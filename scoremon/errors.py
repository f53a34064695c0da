"""Every deliberate exception scoremon raises.

Anything a user can fix raises a subclass of :class:`ScoremonError`; bugs stay ordinary
Python exceptions. The hierarchy::

    ScoremonError                 anything the user can act on (CLI exit code 2)
    ├── SpecError                 a spec file is unreadable or invalid; carries every problem
    ├── InputError                a table, file or column does not fit the spec; carries each misfit
    └── EngineError               the database refused a query; carries the purpose, engine and detail
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence


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
        where = f"{self.file}:{self.line}:{self.column}"
        return f"{where}: {self.path}: {self.message}" if self.path else f"{where}: {self.message}"


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
