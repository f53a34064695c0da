"""Test plumbing: put columns into DuckDB with exact types and score them through the real path.

Columns travel as Arrow arrays so that NULL and NaN stay distinct (Arrow has a validity mask;
a pandas float column would turn NULL into NaN) and each column gets the SQL type asked for.
Scoring goes through :func:`scoremon.api.score`, exactly as a user's table would.
"""
from __future__ import annotations

import pyarrow as pa

from scoremon import api
from scoremon.engines import DuckDBEngine
from scoremon.spec.model import Spec

ARROW_TYPES = {
    "DOUBLE": pa.float64(),
    "BIGINT": pa.int64(),
    "INTEGER": pa.int32(),
    "VARCHAR": pa.string(),
}


def quoted(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


def create_table(engine: DuckDBEngine, table: str, columns: dict[str, tuple[str, list]]) -> None:
    """Create ``table`` from ``{column: (SQL type, values)}``; ``None`` is NULL, ``float('nan')`` NaN."""
    arrays = {name: pa.array(values, type=ARROW_TYPES[kind]) for name, (kind, values) in columns.items()}
    engine.connection.register("__arrow_input", pa.table(arrays))
    try:
        engine.connection.execute(f"CREATE TABLE {quoted(table)} AS SELECT * FROM __arrow_input")
    finally:
        engine.connection.unregister("__arrow_input")


def fetch_table(engine: DuckDBEngine, table: str, order_by: str) -> tuple[list[str], list[tuple]]:
    """Column names and rows of ``table`` ordered by one column."""
    cursor = engine.connection.execute(f"SELECT * FROM {quoted(table)} ORDER BY {quoted(order_by)}")
    rows = cursor.fetchall()
    return [d[0] for d in cursor.description], rows


def score_columns(spec: Spec, columns: dict[str, tuple[str, list]], key: str,
                  engine: DuckDBEngine | None = None) -> tuple[list[str], list[dict]]:
    """Score ``columns`` through DuckDB; return output names and rows ordered by ``key``.

    With ``engine`` given its tables ``applications`` and ``scored`` are replaced (so a test
    can reuse one connection across many examples); otherwise a fresh in-memory one is used.
    """
    own = engine is None
    engine = DuckDBEngine(":memory:") if own else engine
    try:
        engine.connection.execute('DROP TABLE IF EXISTS "applications"')
        create_table(engine, "applications", columns)
        api.score(spec, engine, api.source_relation(table="applications"), keys=[key], out_table="scored", replace=True)
        names, rows = fetch_table(engine, "scored", key)
    finally:
        if own:
            engine.close()
    return names, [dict(zip(names, row)) for row in rows]


def expected_output_names(spec: Spec, keys: list[str]) -> list[str]:
    """README "Scored output": keys, per feature bin and points, score, pd, grade, reasons, identity."""
    names = list(keys)
    for feature in spec.features:
        names += [f"{feature.name}_bin", f"{feature.name}_points"]
    names += ["score", "pd", "grade"]
    names += [f"reason_{k}" for k in range(1, spec.reasons.count + 1)]
    return names + ["model_name", "model_version", "model_fingerprint"]


def close_pd(got: float, want: float, tolerance: float = 1e-12) -> bool:
    """PD agreement: |got − want| ≤ tolerance + tolerance · |want| (absolute and relative)."""
    return abs(got - want) <= tolerance + tolerance * abs(want)
