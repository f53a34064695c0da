"""Rounding in the SQL: half away from zero with a hold that grows with the value, hand-worked cases.

Half away from zero is the usual commercial rounding of a score [practice: common practice];
the hold (a fraction short of .5 by at most max(|x|, 128) · 2⁻⁴⁸ counts as .5) lets binary
noise just below a half (0.49999999999999994, the double nearest to but below 0.5) round as
the half it stands for. A spec with
``pdo = ln 2`` has factor exactly 1, so a linear feature with coefficient −1 scores its
input as points, and the SQL rounds values we choose.
"""
from __future__ import annotations

import math

import pytest
import yaml

from scoremon.spec import parse_spec
from scoremon.spec.terms import round_half_away
from tests.compiler.through_sql import score_columns

# (input, rounded) worked by hand from the rule
CASES = [
    (0.5, 1.0), (1.5, 2.0), (2.5, 3.0), (-0.5, -1.0), (-2.5, -3.0), (0.4999999999, 0.0), (-1.4999999, -1.0),
    (0.49999999999999994, 1.0), (2.4999999999999996, 3.0), (1e-13, 0.0), (599.5, 600.0), (-599.5, -600.0),
]


def identity_spec(rounding: str, bound: float = 1000.0):
    data = {
        "model": {"name": "rounding", "version": "1", "owner": "tests", "effective_date": "2026-01-01",
                  "intended_use": "rounding checks", "event": "y = 1", "performance_window_months": 12},
        "intercept": 0.0,
        "scaling": {"base_score": 0.0, "base_odds": 1.0, "pdo": math.log(2.0), "rounding": rounding},
        "features": [{"name": "x", "type": "linear", "coefficient": -1.0, "lower": -bound, "upper": bound,
                      "missing": {"points": 0.0}}],
        "grades": [{"name": "all", "lower": -math.inf, "upper": math.inf}],
    }
    return parse_spec(yaml.safe_dump(data))


def scored(rounding: str, values: list[float], bound: float = 1000.0) -> list[dict]:
    columns = {"row_id": ("INTEGER", list(range(len(values)))), "x": ("DOUBLE", values)}
    return score_columns(identity_spec(rounding, bound), columns, "row_id")[1]


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


def test_a_value_just_beyond_the_hold_rounds_down():
    # 1.4999999999995 is exactly 1.49999999999949995…: 5.0e-13 short of the half, beyond the
    # hold of 2**-41 ≈ 4.55e-13 for values below 128, so it rounds down
    rows = scored("total", [1.4999999999995])
    assert rows[0]["score"] == 1.0


@pytest.mark.parametrize("rounding", ["per_bin", "total"])
def test_rounding_has_no_size_limit(rounding):
    # far beyond what a DECIMAL(38, 12) holds (below 1e26): every double from 2**52 on is whole
    values = [2.0 ** 52 + 1, 1e20 + 0.5e5, -3e25, 1e26, 7.5e299, -1e300, 123456789.5]
    column = "x_points" if rounding == "per_bin" else "score"
    rows = scored(rounding, values, bound=1e300)
    assert [row[column] for row in rows] == [round_half_away(v) for v in values] == values[:-1] + [123456790.0]


# Binary noise scales with the value: a score near 520 carries noise in units of its last place
# (2**-43 ≈ 1.1e-13), one near 4,500 in units of 2**-40 ≈ 9.1e-13, already more than a fixed
# hold of 12 decimals. 519.4999999999994 is the score aimed at 519.5 (5 units below);
# the others are one unit below the half (math.nextafter), hand-worked to round up.
LARGE = [
    (519.4999999999994, 520.0),
    (math.nextafter(4500.5, 0.0), 4501.0),
    (-math.nextafter(7000.5, 0.0), -7001.0),
    (math.nextafter(123456.5, 0.0), 123457.0),
    # far from the half in units of the value's last place: rounds down
    (519.4999999999, 519.0),
    (4500.49999999, 4500.0),
    (123456.4999999, 123456.0),
]


@pytest.mark.parametrize("rounding", ["per_bin", "total"])
def test_noise_just_below_a_half_rounds_up_at_large_scores(rounding):
    values = [value for value, _ in LARGE]
    column = "x_points" if rounding == "per_bin" else "score"
    rows = scored(rounding, values, bound=1e6)
    assert [row[column] for row in rows] == [rounded for _, rounded in LARGE]
