"""The one place a sqlglot tree becomes SQL text, and the list of engines we render for.

Per-dialect adjustments live here and nowhere else, so the compiler's tree stays neutral.
"""
from __future__ import annotations

from sqlglot import exp
from sqlglot.errors import ErrorLevel

from .errors import InputError

# dialect name → whether the test suite runs the rendered SQL on a real engine
DIALECTS: dict[str, bool] = {"duckdb": True}


def render_sql(tree: exp.Expression, dialect: str = "duckdb", pretty: bool = True) -> str:
    """SQL text for ``dialect`` with every identifier quoted.

    Raises :class:`InputError` for a dialect we do not render.
    """
    if dialect not in DIALECTS:
        raise InputError(f"unknown dialect {dialect!r}; choose one of {', '.join(DIALECTS)}")
    return tree.sql(dialect=dialect, identify=True, pretty=pretty, unsupported_level=ErrorLevel.RAISE)
