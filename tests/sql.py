"""SQL the tests write themselves, handed to an engine as a tree (engines take trees only).

The text is the tests' own, never user input, so parsing it with sqlglot is safe here.
:func:`fetched` gives rows back as tuples in column order, for tests that compare whole rows.
"""
from __future__ import annotations

import sqlglot
from sqlglot import exp


def tree(text: str, dialect: str = "duckdb") -> exp.Expression:
    """``text``, written in ``dialect``, as a sqlglot tree."""
    return sqlglot.parse_one(text, read=dialect)


def fetched(engine, query: str | exp.Expression, purpose: str = "reading") -> list[tuple]:
    """Every row of ``query`` (text in the engine's dialect, or a tree) as a tuple in column order."""
    if isinstance(query, str):
        query = tree(query, engine.dialect)
    return [tuple(row.values()) for row in engine.query(query, purpose)]
