"""Cross-validation folds from the key, the same on every engine.

fold = (the first 8 hex digits of md5(CAST(key AS text)), read as a whole number) mod K.

MD5 exists on DuckDB, PostgreSQL and Spark and returns lower-case hex on each, but turning hex
into a number does not travel (DuckDB casts ``'0x…'``, PostgreSQL needs a bit-string cast,
Spark has ``conv``). So the SQL reads the eight digits one by one: each digit's value is its
position in ``'0123456789abcdef'`` minus one (POSITION / STRPOS / INSTR, which sqlglot renders
per dialect), and the number is Σ digit·16^(7−i) — at most 2³² − 1, exact in BIGINT. Python
computes the same with :func:`fold_of`.

The key's text must be the same everywhere, so a key column must hold text or whole numbers
(a DOUBLE prints as ``1.0`` on one engine and ``1`` on another); :func:`check_key_kind` says so.
"""
from __future__ import annotations

import hashlib
import re

from sqlglot import exp

from ..errors import InputError

HEX_DIGITS = "0123456789abcdef"
DIGITS_USED = 8
KEY_TYPE = re.compile(r"^(TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|INT\d?|UINTEGER|UBIGINT|USMALLINT|UTINYINT|LONG|SHORT|"
                      r"BYTE|VARCHAR|TEXT|STRING|CHAR|BPCHAR|CHARACTER VARYING)(\(.*\))?$", re.I)


def fold_of(key, fold_count: int) -> int:
    """The fold of one key value, computed in Python (the reference for the SQL)."""
    digest = hashlib.md5(str(key).encode("utf-8")).hexdigest()
    return int(digest[:DIGITS_USED], 16) % fold_count


def fold_expression(key: exp.Expression, fold_count: int) -> exp.Expression:
    """The fold (0 … K−1) of each row as a portable SQL expression over ``key``."""
    if fold_count < 1:
        raise InputError(f"--folds {fold_count}: give 1 (no cross-validation) or more folds")
    text = exp.Cast(this=key.copy(), to=exp.DataType.build("TEXT"))
    digest = exp.MD5(this=text)
    number: exp.Expression | None = None
    for i in range(DIGITS_USED):
        digit = exp.Substring(this=digest.copy(), start=exp.Literal.number(i + 1), length=exp.Literal.number(1))
        value = exp.Sub(this=exp.StrPosition(this=exp.Literal.string(HEX_DIGITS), substr=digit),
                        expression=exp.Literal.number(1))
        term = exp.Mul(this=exp.Cast(this=exp.paren(value, copy=False), to=exp.DataType.build("BIGINT")),
                       expression=exp.Literal.number(16 ** (DIGITS_USED - 1 - i)))
        number = term if number is None else exp.Add(this=number, expression=term)
    return exp.Mod(this=exp.paren(number, copy=False), expression=exp.Literal.number(fold_count))


def check_key_kind(name: str, type_name: str) -> None:
    """Raise :class:`InputError` unless the key column's engine type is text or a whole number."""
    if not KEY_TYPE.match(type_name.strip()):
        raise InputError(f"key column {name!r} is {type_name}; folds are made from the key's text, which must read "
                         "the same on every engine: use a text or whole-number key column")
