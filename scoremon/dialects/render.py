"""The one place a sqlglot tree becomes SQL text.

Per-dialect adjustments live here and nowhere else, so the compiler's tree stays neutral. Each
adjustment rewrites a copy of the tree just before sqlglot renders it:

* ``postgres``: every CTE body gets ``OFFSET 0``. PostgreSQL inlines a CTE that is used once
  and then pulls the subquery up into the next step, and the scoring steps each refer to the
  columns of the step before many times, so an inlined chain copied the scoring expressions
  hundreds of times into the plan. ``OFFSET 0`` keeps each step a subquery of its own that
  computes its columns once per row and streams them on (and drops the columns nothing reads).
  Marking the CTEs ``MATERIALIZED`` also stops the copying but writes every step's rows to a
  tuplestore: with the bench scorecard (1M rows) that was about 4 times slower than the fences
  (``scoremon bench --engines``; ``EXPLAIN VERBOSE`` shows each CASE about once either way).
* ``bigquery`` and ``trino``: NaN is not equal to itself there (IEEE comparison), so the NaN
  test ``x = CAST('NaN' AS DOUBLE)`` becomes ``IS_NAN(x)``; the infinities are written the way
  each documents them (``'inf'`` for BigQuery, ``INFINITY()`` for Trino).
* ``snowflake``: the infinities are written ``'inf'`` / ``'-inf'``, as Snowflake documents.
* ``tsql``: SQL Server's FLOAT cannot hold NaN or ±infinity (and casting those strings is an
  error), so the tests for them become ``1 = 0``; text with characters beyond ASCII is written
  ``N'…'`` so that it is not squeezed into the database's code page.
* ``duckdb`` (speed only; same values): a lookup by bin number (``CASE WHEN b = 0 THEN v0
  WHEN b = 1 THEN v1 … ELSE vn END``: what the compiler looks up by bin number, and a
  reason slot's code by picked statement) becomes a list index ``[v0, v1, …, vn][b + 1]``, and a
  categorical feature's ``x IN (…)`` chain becomes one ``MAP {value: outcome, …}[x]``, with
  the missing and catch-all outcomes in a COALESCE after it. DuckDB evaluates a CASE branch
  by branch over the whole vector, so a chain of n branches costs about n passes, where a
  list index or a map probe costs one — and a map probe of a dictionary-encoded text column
  costs one per distinct value, but only outside a CASE; measured on ``scoremon bench``. The
  bin numbers are always 0 … n, so the list index is never out of range (a NULL there would
  be a bug).
* ``duckdb`` writing Parquet (``for_parquet``; speed only, same file): text constants — labels,
  grade, reason codes, the model's identity — become ENUM values. DuckDB's Parquet writer
  hashes a VARCHAR column value by value to build its dictionary, but writes an ENUM's
  dictionary as it stands: the scored bench file (23 text columns) wrote nearly twice as fast
  (``scoremon bench``, line d). The file holds plain UTF-8 strings either way. Tables keep
  VARCHAR: an ENUM column there would refuse any later value outside its list (an UPDATE, an
  INSERT from another model version).

DuckDB, PostgreSQL and Spark compare NaN equal to itself and larger than every number, so the
compiler's NaN test runs unchanged there (PostgreSQL has no ``isnan``).
"""
from __future__ import annotations

from typing import Callable, Sequence

from sqlglot import exp
from sqlglot.errors import ErrorLevel

from ..errors import InputError
from ..trees import table_path
from . import COLUMN_KINDS, DIALECTS

def render_sql(tree: exp.Expression, dialect: str = "duckdb", pretty: bool = True, for_parquet: bool = False) -> str:
    """SQL text for ``dialect`` with every identifier quoted.

    The tree is not changed; adjustments are made on a copy (see the module docstring).
    ``for_parquet`` says the rows go to a Parquet file (DuckDB then writes text constants as
    ENUM). Raises :class:`InputError` for a dialect we do not render.
    """
    if dialect not in DIALECTS:
        raise InputError(f"unknown dialect {dialect!r}; choose one of {', '.join(DIALECTS)}")
    adjust = _duckdb_parquet if for_parquet and dialect == "duckdb" else _ADJUSTMENTS.get(dialect)
    if adjust is not None:
        tree = tree.copy().transform(adjust, copy=False)
    return tree.sql(dialect=dialect, identify=True, pretty=pretty, unsupported_level=ErrorLevel.RAISE)


def render_table(parts: Sequence[str], dialect: str) -> str:
    """A table name as quoted SQL text for ``dialect``."""
    return render_sql(table_path(parts), dialect, pretty=False)


def render_name(name: str, dialect: str) -> str:
    """One column or table name as a quoted identifier for ``dialect``."""
    return render_sql(exp.to_identifier(name, quoted=True), dialect, pretty=False)


def render_type(kind: str, dialect: str) -> str:
    """One of :data:`COLUMN_KINDS` as the dialect's type name (DOUBLE → DOUBLE PRECISION on PostgreSQL)."""
    if kind not in COLUMN_KINDS:
        raise InputError(f"column kind {kind!r} is not one of {', '.join(COLUMN_KINDS)}")
    return render_sql(exp.DataType.build(kind), dialect, pretty=False)



# ---------------------------------------------------------------- adjustments

_ODD_DOUBLES = ("NaN", "Infinity", "-Infinity")


def _odd_double_test(node: exp.Expression) -> tuple[exp.Expression, str] | None:
    """``(x, 'NaN')`` when ``node`` is the compiler's ``x = CAST('NaN' AS DOUBLE)`` (or ±Infinity)."""
    if not isinstance(node, exp.EQ):
        return None
    constant = node.expression
    if (isinstance(constant, exp.Cast) and constant.to.this == exp.DataType.Type.DOUBLE
            and isinstance(constant.this, exp.Literal) and constant.this.is_string
            and constant.this.name in _ODD_DOUBLES):
        return node.this, constant.this.name
    return None


def _double_from_text(value: str, dialect_type: str = "DOUBLE") -> exp.Expression:
    return exp.Cast(this=exp.Literal.string(value), to=exp.DataType.build(dialect_type))


def _postgres(node: exp.Expression) -> exp.Expression:
    if isinstance(node, exp.CTE) and isinstance(node.this, exp.Select) and not node.this.args.get("offset") \
            and not node.this.args.get("limit"):
        node.this.set("offset", exp.Offset(expression=exp.Literal.number(0)))
    return node


def _is_nan_or_infinity(node: exp.Expression, infinity: Callable[[bool], exp.Expression]) -> exp.Expression:
    """The compiler's odd-double test as ``IS_NAN(x)``, or ``x = infinity(positive)``."""
    test = _odd_double_test(node)
    if test is None:
        return node
    x, name = test
    if name == "NaN":
        return exp.IsNan(this=x)
    return exp.EQ(this=x, expression=infinity(name == "Infinity"))


def _bigquery(node: exp.Expression) -> exp.Expression:
    return _is_nan_or_infinity(node, lambda positive: _double_from_text("inf" if positive else "-inf"))


def _trino(node: exp.Expression) -> exp.Expression:
    def infinity(positive: bool) -> exp.Expression:
        value = exp.Anonymous(this="INFINITY", expressions=[])
        return value if positive else exp.Neg(this=value)

    return _is_nan_or_infinity(node, infinity)


def _snowflake(node: exp.Expression) -> exp.Expression:
    test = _odd_double_test(node)
    if test is None or test[1] == "NaN":
        return node
    x, name = test
    return exp.EQ(this=x, expression=_double_from_text("inf" if name == "Infinity" else "-inf"))


def _tsql(node: exp.Expression) -> exp.Expression:
    if isinstance(node, exp.Literal) and node.is_string and not node.this.isascii():
        # a plain '…' literal is in the database's code page, where '日本' becomes '??'; N'…' is Unicode
        return exp.National(this=node.this)
    if _odd_double_test(node) is None:
        return node
    return exp.EQ(this=exp.Literal.number(1), expression=exp.Literal.number(0))


def _constant(node: exp.Expression) -> bool:
    """A literal, or a literal under CAST / unary minus (what the compiler writes for values)."""
    while isinstance(node, (exp.Cast, exp.Neg, exp.Paren)):
        node = node.this
    return isinstance(node, exp.Literal)


def _bin_lookup(node: exp.Case, enum_text: bool) -> exp.Expression | None:
    """``[v0, …, vn][b + 1]`` for the compiler's ``CASE WHEN b = 0 THEN v0 … [ELSE vn] END``."""
    ifs, default = node.args.get("ifs") or [], node.args.get("default")
    if len(ifs) < 2 or (default is not None and not _constant(default)):
        return None
    subject = None
    for position, branch in enumerate(ifs):
        test = branch.this
        if not (isinstance(test, exp.EQ) and isinstance(test.this, exp.Column) and isinstance(test.expression, exp.Literal)
                and not test.expression.is_string and test.expression.this == str(position)
                and _constant(branch.args["true"])):
            return None
        if subject is None:
            subject = test.this
        elif test.this != subject:
            return None
    values = [branch.args["true"].copy() for branch in ifs] + ([default.copy()] if default is not None else [])
    # DuckDB lists are 1-based; without an ELSE, a NULL number (an empty reason slot) or one past
    # the end gives NULL as the CASE does (the compiler's numbers are never negative)
    position = exp.Add(this=subject.copy(), expression=exp.Literal.number(1))
    table: exp.Expression = exp.Array(expressions=values)
    if enum_text and all(_is_text(v) for v in values):
        table = exp.Cast(this=table, to=exp.DataType(this=exp.DataType.Type.ARRAY, expressions=[_enum(values)], nested=True))
    return exp.Bracket(this=table, expressions=[position])


def _is_text(node: exp.Expression | None) -> bool:
    return isinstance(node, exp.Literal) and node.is_string


def _enum(values: Sequence[exp.Literal]) -> exp.DataType:
    """``ENUM(…)`` of the distinct texts, in code-point order: an ENUM sorts by its list, so
    ORDER BY and MIN / MAX give what they give on the same texts as VARCHAR."""
    texts = sorted({v.this for v in values})
    return exp.DataType(this=exp.DataType.Type.ENUM, expressions=[exp.Literal.string(t) for t in texts])


def _text_choice(node: exp.Case) -> exp.Expression | None:
    """A CASE whose every outcome is a text constant (a label, the grade) with ENUM constants;
    outcomes may be CASEs themselves (a label found in runs of edges), their texts count too."""
    leaves = _outcomes(node)
    if not leaves or not all(_is_text(v) for v in leaves):
        return None
    kind = _enum(leaves)

    def enum(outcome: exp.Expression) -> exp.Expression:
        if isinstance(outcome, exp.Case):
            return _with_outcomes(outcome, enum)
        return exp.Cast(this=outcome.copy(), to=kind.copy())

    return _with_outcomes(node, enum)


def _outcomes(node: exp.Case) -> list[exp.Expression]:
    """Every value a CASE can yield, looking into CASEs it yields; empty if it has no WHEN."""
    ifs, default = node.args.get("ifs") or [], node.args.get("default")
    if not ifs:
        return []
    leaves = []
    for outcome in [branch.args["true"] for branch in ifs] + ([default] if default is not None else []):
        inner = _outcomes(outcome) if isinstance(outcome, exp.Case) else [outcome]
        if not inner:
            return []
        leaves += inner
    return leaves


def _with_outcomes(node: exp.Case, change: Callable[[exp.Expression], exp.Expression]) -> exp.Case:
    ifs, default = node.args.get("ifs") or [], node.args.get("default")
    return exp.Case(ifs=[exp.If(this=b.this.copy(), true=change(b.args["true"])) for b in ifs],
                    default=change(default) if default is not None else None)


def _text_column(node: exp.Alias) -> exp.Expression | None:
    """``'text' AS name`` in a SELECT list (the model's identity) as a one-value ENUM."""
    if not (_is_text(node.this) and isinstance(node.parent, exp.Select)):
        return None
    return exp.alias_(exp.Cast(this=node.this.copy(), to=_enum([node.this])), node.alias, quoted=True)


def _category_lookup(node: exp.Case, enum_text: bool) -> exp.Expression | None:
    """``COALESCE(MAP {v: outcome, …}[x], CASE WHEN x IS NULL THEN m ELSE other END)`` for the
    compiler's ``CASE WHEN x IS NULL THEN m WHEN x IN (…) THEN o0 … ELSE other END`` (outcomes
    are bin numbers, labels or numbers)."""
    ifs, default = node.args.get("ifs") or [], node.args.get("default")
    if len(ifs) < 2 or default is None or not _constant(default):
        return None
    missing = ifs[0].this
    if not (isinstance(missing, exp.Is) and isinstance(missing.this, exp.Column) and isinstance(missing.expression, exp.Null)):
        return None
    subject = missing.this
    keys: dict[tuple[bool, str], tuple[exp.Literal, exp.Expression]] = {}
    for branch in ifs[1:]:
        test, value = branch.this, branch.args["true"]
        if not (isinstance(test, exp.In) and test.this == subject and _constant(value)
                and test.expressions and all(isinstance(v, exp.Literal) for v in test.expressions)):
            return None
        for literal in test.expressions:
            # the first group listing a value wins, as in the CASE chain
            keys.setdefault((literal.is_string, literal.this), (literal, value))
    if len({is_string for is_string, _ in keys}) != 1:
        return None  # mixed text and numbers: a MAP needs one key type, keep the CASE
    outcomes = [v.copy() for _, v in keys.values()]
    missing, other = ifs[0].args["true"].copy(), default.copy()
    values: exp.Expression = exp.Array(expressions=outcomes)
    if enum_text and all(_is_text(v) for v in outcomes + [missing, other]):
        kind = _enum(outcomes + [missing, other])
        values = exp.Cast(this=values, to=exp.DataType(this=exp.DataType.Type.ARRAY, expressions=[kind], nested=True))
        missing, other = exp.Cast(this=missing, to=kind.copy()), exp.Cast(this=other, to=kind.copy())
    table = exp.Map(keys=exp.Array(expressions=[k.copy() for k, _ in keys.values()]), values=values)
    found = exp.Bracket(this=table, expressions=[subject.copy()])
    # the probe first and on every row: DuckDB evaluates a function of a dictionary-encoded
    # text column once per distinct value, but not inside a CASE branch (scoremon bench)
    return exp.Coalesce(this=found, expressions=[exp.Case(ifs=[exp.If(this=ifs[0].this.copy(), true=missing)], default=other)])


def _duckdb(node: exp.Expression) -> exp.Expression:
    if isinstance(node, exp.Case):
        return _bin_lookup(node, enum_text=False) or _category_lookup(node, enum_text=False) or node
    return node


def _duckdb_parquet(node: exp.Expression) -> exp.Expression:
    if isinstance(node, exp.Case):
        return _bin_lookup(node, enum_text=True) or _category_lookup(node, enum_text=True) or _text_choice(node) or node
    if isinstance(node, exp.Alias):
        return _text_column(node) or node
    return node


_ADJUSTMENTS: dict[str, Callable[[exp.Expression], exp.Expression]] = {
    "duckdb": _duckdb,
    "postgres": _postgres,
    "bigquery": _bigquery,
    "trino": _trino,
    "snowflake": _snowflake,
    "tsql": _tsql,
}
