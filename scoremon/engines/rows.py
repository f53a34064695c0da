"""Rows handed over from Python, as an Arrow table with an explicit schema.

DuckDB and Spark both take Arrow tables as they are: an Arrow float64 column keeps NaN and ±inf
apart from NULL, which a pandas float column cannot (it has one NaN for both).
"""
from __future__ import annotations

from typing import Any, Sequence

import pyarrow as pa

from ..errors import InputError
from .protocol import ColumnSpec

ARROW_TYPES = {
    "DOUBLE": pa.float64(),
    "BIGINT": pa.int64(),
    "DECIMAL(18,6)": pa.decimal128(18, 6),
    "VARCHAR": pa.string(),
    "BOOLEAN": pa.bool_(),
    "DATE": pa.date32(),
}


def arrow_table(columns: Sequence[ColumnSpec], rows: Sequence[Sequence[Any]]) -> pa.Table:
    """``rows`` (tuples in ``columns`` order) as an Arrow table; raises :class:`InputError` on a bad kind or row."""
    for name, kind in columns:
        if kind not in ARROW_TYPES:
            raise InputError(f"column {name!r}: kind {kind!r} is not one of {', '.join(ARROW_TYPES)}")
    width = len(columns)
    for number, row in enumerate(rows):
        if len(row) != width:
            raise InputError(f"row {number} has {len(row)} values for {width} columns")
    values = list(zip(*rows)) if rows else [() for _ in columns]
    arrays = [pa.array(list(column), type=ARROW_TYPES[kind]) for (_, kind), column in zip(columns, values)]
    return pa.Table.from_arrays(arrays, names=[name for name, _ in columns])
