"""The one type mapper: an engine's name for a column type → a portable kind.

Each engine's :meth:`~scoremon.engines.Engine.describe` spells types its own way (DuckDB
``DOUBLE``, ``VARCHAR``, ``ENUM(…)``, ``HUGEINT``; PostgreSQL ``DOUBLE PRECISION``, ``BPCHAR``,
``NUMERIC``; Spark ``STRING``, ``DECIMAL(10,2)``, ``TIMESTAMP_NTZ``). The name is parsed once with
sqlglot's data types for the engine's dialect and sorted into one of
:data:`~scoremon.engines.protocol.KINDS`; a name sqlglot cannot parse (a user-defined type) is
``other``.

>>> column_of("amount", "DOUBLE PRECISION", "postgres")
Column(name='amount', kind='numeric', type_name='DOUBLE PRECISION', can_hold_nan=True)
>>> column_of("region", "ENUM('N1', 'S2')", "duckdb").kind
'text'
"""
from __future__ import annotations

from sqlglot import exp
from sqlglot.errors import ParseError

from .protocol import BOOLEAN, DATE, INTEGER, NUMERIC, OTHER, TEXT, Column

_T = exp.DataType.Type
_FLOATS = {_T.DOUBLE, _T.FLOAT, _T.UDOUBLE}
_KIND_OF = {
    **{t: INTEGER for t in (_T.TINYINT, _T.SMALLINT, _T.MEDIUMINT, _T.INT, _T.BIGINT, _T.INT128, _T.INT256,
                            _T.UTINYINT, _T.USMALLINT, _T.UMEDIUMINT, _T.UINT, _T.UBIGINT, _T.UINT128, _T.UINT256)},
    **{t: NUMERIC for t in (_T.DOUBLE, _T.FLOAT, _T.UDOUBLE, _T.DECIMAL, _T.BIGDECIMAL, _T.UDECIMAL, _T.DECIMAL32,
                            _T.DECIMAL64, _T.DECIMAL128, _T.DECIMAL256, _T.DECFLOAT)},
    **{t: TEXT for t in (_T.TEXT, _T.VARCHAR, _T.CHAR, _T.NCHAR, _T.NVARCHAR, _T.BPCHAR, _T.NAME, _T.ENUM,
                         _T.TINYTEXT, _T.MEDIUMTEXT, _T.LONGTEXT)},
    _T.BOOLEAN: BOOLEAN,
    **{t: DATE for t in (_T.DATE, _T.DATE32, _T.DATETIME, _T.DATETIME2, _T.DATETIME64, _T.SMALLDATETIME,
                         _T.TIMESTAMP, _T.TIMESTAMPTZ, _T.TIMESTAMPLTZ, _T.TIMESTAMPNTZ, _T.TIMESTAMP_S,
                         _T.TIMESTAMP_MS, _T.TIMESTAMP_NS)},
}


def column_of(name: str, type_name: str, dialect: str) -> Column:
    """A described column: ``type_name`` as ``dialect`` spells it, sorted into a portable kind."""
    try:
        parsed = exp.DataType.build(type_name, dialect=dialect).this
    except (ParseError, ValueError):
        return Column(name, OTHER, type_name)
    # PostgreSQL's NUMERIC holds NaN (and ±Infinity since PostgreSQL 14); DuckDB's and Spark's DECIMAL do not
    can_hold_nan = parsed in _FLOATS or (dialect == "postgres" and parsed == _T.DECIMAL)
    return Column(name, _KIND_OF.get(parsed, OTHER), type_name, can_hold_nan)
