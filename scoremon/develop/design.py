"""The development table in the engine: the WoE design and the row-level passes of a fit."""
from __future__ import annotations

from sqlglot import exp

from ..dialects import render_sql


def fetch_rows(engine, tree: exp.Expression, purpose: str) -> list[tuple]:
    """Run one query tree on ``engine``: the only place fitting talks to an engine."""
    return engine.fetch(render_sql(tree, engine.dialect), purpose)
