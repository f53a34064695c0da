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
COLUMN_KINDS = ("DOUBLE", "BIGINT", "DECIMAL(18,6)", "VARCHAR", "BOOLEAN", "DATE")


def dialects_help() -> str:
    """One line for ``--help``: which dialects run in the tests and which are only rendered."""
    run = ", ".join(name for name, tested in DIALECTS.items() if tested)
    rendered = ", ".join(name for name, tested in DIALECTS.items() if not tested)
    return f"{run} (run on real engines in the tests); {rendered} (rendered only, not run in the tests)"


def comment_line(words: str) -> str:
    """``/* words */`` on one line, to stand before a statement. ``words`` may hold text from a
    spec (a model's name), so it can neither end the comment nor break the line: ``*/`` and
    ``/*`` are split and control characters become spaces."""
    flat = "".join(" " if ord(ch) < 32 or ord(ch) == 127 else ch for ch in words)
    return "/* " + flat.replace("*/", "* /").replace("/*", "/ *") + " */"


_RENDERING = ("render_name", "render_sql", "render_table", "render_type")


def __getattr__(name: str):
    if name in _RENDERING:
        return getattr(import_module(".render", __name__), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
