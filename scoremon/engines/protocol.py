"""What scoremon needs from a SQL engine: the :class:`Engine` protocol.

Kept in its own module so every implementation can import it without importing the package
facade (and so without importing each other).
"""
from __future__ import annotations

from typing import Callable, Protocol

import pandas as pd

Progress = Callable[[float], None]  # called with the share done, 0.0 to 1.0


class Engine(Protocol):
    """What scoremon needs from a SQL engine."""

    dialect: str

    def execute(self, sql: str, purpose: str) -> None: ...

    def fetch(self, sql: str, purpose: str, progress: Progress | None = None) -> list[tuple]: ...

    def fetch_frame(self, sql: str, purpose: str) -> pd.DataFrame: ...

    def describe(self, sql: str, purpose: str) -> list[tuple[str, str]]: ...

    def write_table(self, sql: str, table: list[str], purpose: str, progress: Progress | None = None) -> None: ...

    def close(self) -> None: ...
