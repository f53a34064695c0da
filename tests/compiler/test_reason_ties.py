"""Reason ties: shortfalls are compared held to 10⁻⁹ points (README, "The spec", reasons).

The pair 10.820212806667215 / 10.820212806667227 is the one the issue reports: two shortfalls
equal in exact arithmetic (both 0.3 × factor with PDO 25) that double arithmetic left 12
units apart in the last place, which ordered the statements by the noise.
"""
import pytest

from scoremon import api
from scoremon.engines import DuckDBEngine
from scoremon.spec import parse_spec
from tests.reference_scorer import ReferenceScorer
from tests.sql import fetched, tree

SPEC = """
model: {name: ties, version: 1, owner: Tests, effective_date: 2026-01-01, intended_use: tests,
        event: default, performance_window_months: 12}
intercept: -2.0
scaling: {base_score: 600, base_odds: 50, pdo: 20}
features:
  - name: a
    type: numeric
    bins: [{lower: -.inf, upper: .inf, points: 0}]
    missing: {points: 0}
  - name: b
    type: numeric
    bins: [{lower: -.inf, upper: .inf, points: 0}]
    missing: {points: 0}
grades: [{name: A, lower: -.inf, upper: .inf}]
reasons:
  count: 2
  statements:
    - {code: FIRST, text: listed first, features: [a], reference: FIRST_REFERENCE}
    - {code: SECOND, text: listed second, features: [b], reference: SECOND_REFERENCE}
"""


def reasons(first: str, second: str) -> tuple:
    spec = parse_spec(SPEC.replace("FIRST_REFERENCE", first).replace("SECOND_REFERENCE", second))
    engine = DuckDBEngine(":memory:")
    engine.execute(tree("CREATE TABLE t AS SELECT 1.0 AS a, 1.0 AS b"), "making a row")
    api.score(spec, engine, api.source_relation(table="t"), out_table="s")
    (sql,) = fetched(engine, "SELECT reason_1, reason_2 FROM s")
    scored = ReferenceScorer(spec).score_row({"a": 1.0, "b": 1.0})
    assert (scored["reason_1"], scored["reason_2"]) == sql
    return sql


def test_shortfalls_equal_but_for_the_last_bits_go_to_the_statement_listed_first():
    assert reasons("10.820212806667215", "10.820212806667227") == ("FIRST", "SECOND")


@pytest.mark.parametrize("second", ["10.820212809", "10.8202128077"])
def test_shortfalls_apart_by_a_billionth_of_a_point_or_more_go_by_size(second):
    # 10.820212806667215 holds as 10820212807 billionths; 10.8202128077 as 10820212808
    assert reasons("10.820212806667215", second) == ("SECOND", "FIRST")
