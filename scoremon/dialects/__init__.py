"""The dialects scoremon renders SQL for, and (in ``render``) the one place a tree becomes SQL text.

The list of dialects is here, without sqlglot, so that ``scoremon --help`` can name them without
loading it; :func:`render_sql` and its helpers are handed on from :mod:`.render` when first asked
for.
"""
from importlib import import_module

# dialect name → whether the test suite runs the rendered SQL on a real engine
DIALECTS: dict[str, bool] = {
    "duckdb": True,
    "postgres": True,
    "spark": True,
    "snowflake": False,
    "bigquery": False,
    "trino": False,
    "tsql": False,
}

# The portable column kinds engines can create tables with (see Engine.write_rows).
COLUMN_KINDS = ("DOUBLE", "BIGINT", "VARCHAR", "BOOLEAN", "DATE")


def dialects_help() -> str:
    """One line for ``--help``: which dialects run in the tests and which are only rendered."""
    run = ", ".join(name for name, tested in DIALECTS.items() if tested)
    rendered = ", ".join(name for name, tested in DIALECTS.items() if not tested)
    return f"{run} (run on real engines in the tests); {rendered} (rendered only, not run in the tests)"


_RENDERING = ("render_name", "render_sql", "render_table", "render_type")


def __getattr__(name: str):
    if name in _RENDERING:
        return getattr(import_module(".render", __name__), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
