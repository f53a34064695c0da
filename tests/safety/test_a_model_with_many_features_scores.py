"""A model with 1,200 features scores on DuckDB: its sums are built as balanced trees, so the
depth of the SQL expression grows with log n and stays under DuckDB's max_expression_depth
(1000 by default), and a reason statement over every feature does too.

Scores are checked against the independent reference scorer (tests/reference_scorer.py).
Adding in a different order changes only the last bits of a double, so the comparison allows
1e-9 relative.
"""
from __future__ import annotations

import math

import pandas as pd
import pytest
import yaml
from sqlglot import exp

from scoremon import api
from scoremon.compiler import compile_model
from scoremon.spec import parse_spec
from tests.reference_scorer import score_frame
from tests.sql import fetched

FEATURES = 1_200


def many_features_spec(count: int = FEATURES):
    features = [{"name": f"x{i}", "type": "numeric",
                 "bins": [{"lower": -math.inf, "upper": 0.0, "points": round(0.25 + (i % 7) * 0.5, 2)},
                          {"lower": 0.0, "upper": math.inf, "points": round(-0.5 - (i % 5) * 0.25, 2)}],
                 "missing": {"points": 0.0}} for i in range(count)]
    data = {
        "model": {"name": "many features", "version": "1", "owner": "tests", "effective_date": "2026-01-01",
                  "intended_use": "tests", "event": "y = 1", "performance_window_months": 12},
        "intercept": -2.0,
        "scaling": {"base_score": 600, "base_odds": 50, "pdo": 20, "rounding": "none"},
        "features": features,
        "grades": [{"name": "low", "lower": -math.inf, "upper": 600}, {"name": "high", "lower": 600, "upper": math.inf}],
        "reasons": {"count": 2, "statements": [
            {"code": "MOST", "text": "every feature but the first", "features": [f["name"] for f in features[1:]]},
            {"code": "FIRST", "text": "the first feature", "features": ["x0"]}]},
    }
    return parse_spec(yaml.safe_dump(data, sort_keys=False))


def depth(node: exp.Expression) -> int:
    deepest, stack = 0, [(node, 1)]
    while stack:
        item, level = stack.pop()
        deepest = max(deepest, level)
        stack.extend((child, level + 1) for child in item.iter_expressions())
    return deepest


def test_a_spec_with_1200_features_scores_on_duckdb(engine):
    spec = many_features_spec()
    values = {f"x{i}": [(-1.0) ** (i + r) * (r + 1) if (i + r) % 11 else None for r in range(4)]
              for i in range(FEATURES)}
    frame = pd.DataFrame(values, dtype=object)
    engine.connection.register("rows_frame", pd.DataFrame(values, dtype=float))
    engine.connection.execute("CREATE TABLE book AS SELECT row_number() OVER () AS id, * FROM rows_frame")
    out = api.score(spec, engine, api.source_relation(table="book"), keys=["id"], out_table="scores")
    assert out.rows == 4
    got = fetched(engine, 'SELECT score, reason_1 FROM scores ORDER BY id', "reading the scores")
    want = score_frame(spec, frame)
    for (score, reason), (_, expected) in zip(got, want.iterrows()):
        assert score == pytest.approx(expected["score"], rel=1e-9, abs=1e-9)
        assert reason == expected["reason_1"]


def test_sums_grow_with_log_n_not_n():
    # the deepest path through the scoring tree: a left-to-right chain of 1,200 additions would be
    # deeper than 1,200; a balanced tree of runs stays far below DuckDB's limit of 1000
    tree = compile_model(many_features_spec(), exp.to_table("book"))
    assert depth(tree) < 200
