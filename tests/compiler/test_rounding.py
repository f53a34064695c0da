"""Rounding in the SQL: half away from zero after holding 12 decimals, hand-worked cases.

Half away from zero is the usual commercial rounding of a score [practice: common practice];
holding 12 decimals first lets binary noise just below a half (0.49999999999999994, the
double nearest to but below 0.5) round as the half it stands for. A spec with
``pdo = ln 2`` has factor exactly 1, so a linear feature with coefficient −1 scores its
input as points, and the SQL rounds values we choose.
"""
from __future__ import annotations

import math

import pytest
import yaml

from scoremon.spec import parse_spec
from tests.compiler.through_sql import score_columns

# (input, rounded) worked by hand from the rule
CASES = [
    (0.5, 1.0), (1.5, 2.0), (2.5, 3.0), (-0.5, -1.0), (-2.5, -3.0), (0.4999999999, 0.0), (-1.4999999, -1.0),
    (0.49999999999999994, 1.0), (2.4999999999999996, 3.0), (1e-13, 0.0), (599.5, 600.0), (-599.5, -600.0),
]


def identity_spec(rounding: str):
    data = {
        "model": {"name": "rounding", "version": "1", "owner": "tests", "effective_date": "2026-01-01",
                  "intended_use": "rounding checks", "event": "y = 1", "performance_window_months": 12},
        "intercept": 0.0,
        "scaling": {"base_score": 0.0, "base_odds": 1.0, "pdo": math.log(2.0), "rounding": rounding},
        "features": [{"name": "x", "type": "linear", "coefficient": -1.0, "lower": -1000.0, "upper": 1000.0,
                      "missing": {"points": 0.0}}],
        "grades": [{"name": "all", "lower": -math.inf, "upper": math.inf}],
    }
    return parse_spec(yaml.safe_dump(data))


def scored(rounding: str, values: list[float]) -> list[dict]:
    columns = {"row_id": ("INTEGER", list(range(len(values)))), "x": ("DOUBLE", values)}
    return score_columns(identity_spec(rounding), columns, "row_id")[1]


def test_the_identity_spec_scores_its_input():
    # guards the cases below: factor 1, offset 0, points = x
    spec = identity_spec("none")
    assert spec.scaling.factor == 1.0 and spec.scaling.offset == 0.0
    assert [row["score"] for row in scored("none", [0.5, -2.25])] == [0.5, -2.25]


def test_per_bin_rounds_each_linear_points_value():
    rows = scored("per_bin", [value for value, _ in CASES])
    assert [row["x_points"] for row in rows] == [rounded for _, rounded in CASES]


def test_total_rounds_the_score_and_keeps_points_unrounded():
    rows = scored("total", [value for value, _ in CASES])
    assert [row["score"] for row in rows] == [rounded for _, rounded in CASES]
    assert [row["x_points"] for row in rows] == [value for value, _ in CASES]


@pytest.mark.xfail(strict=True, reason=(
    "known difference: DuckDB casts DOUBLE to DECIMAL(38, 12) by multiplying by 1e12 in double "
    "arithmetic, so 1.4999999999995 (exactly 1.49999999999949995…, held as 1.499999999999 by the "
    "documented rule and by scoremon.spec.terms) is held as 1.500000000000 and rounds to 2; only "
    "values within about 1e-13 of a 12-decimal half are affected"))
def test_a_value_just_below_a_twelve_decimal_half_is_held_below_it():
    rows = scored("total", [1.4999999999995])
    assert rows[0]["score"] == 1.0
