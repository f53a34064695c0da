"""Folds from the key: the same on DuckDB, PostgreSQL and Spark as in Python (hashlib)."""
from __future__ import annotations

import hashlib

import pytest
from sqlglot import exp

from scoremon.compiler import column
from scoremon.develop.design import fetch_rows
from scoremon.develop.folds import check_key_kind, fold_expression, fold_of
from scoremon.errors import InputError

TEXT_KEYS = ["A-17", "", "é ü 字", "x\"; DROP TABLE t; --", "0", "ffffffff"]


def _folds(engine, kind: str, keys: list, k: int) -> dict:
    engine.write_rows(["keys"], [("key", kind)], [(v,) for v in keys], "loading keys")
    tree = exp.select(column("key"), exp.alias_(fold_expression(column("key"), k), "fold", quoted=True)).from_(
        exp.to_table(exp.to_identifier("keys", quoted=True)))
    return {key: int(fold) for key, fold in fetch_rows(engine, tree, "reading folds")}


@pytest.mark.parametrize("k", [2, 5, 10])
def test_integer_keys_get_the_python_fold_on_every_engine(each_engine, k):
    # reference: hashlib.md5 of the key's decimal text, first 8 hex digits, mod K
    keys = list(range(-50, 450)) + [2**62, -(2**62)]
    folds = _folds(each_engine, "BIGINT", keys, k)
    assert folds == {key: int(hashlib.md5(str(key).encode()).hexdigest()[:8], 16) % k for key in keys}


def test_text_keys_get_the_python_fold_on_every_engine(each_engine):
    folds = _folds(each_engine, "VARCHAR", TEXT_KEYS, 7)
    assert folds == {key: fold_of(key, 7) for key in TEXT_KEYS}


def test_a_double_key_is_refused_with_the_column_named():
    with pytest.raises(InputError, match="key column 'id' is DOUBLE; folds are made from the key's text"):
        check_key_kind("id", "DOUBLE")
    check_key_kind("id", "BIGINT")
    check_key_kind("id", "VARCHAR(20)")
