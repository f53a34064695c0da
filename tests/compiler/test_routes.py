"""Which route the compiler takes per feature, and that both routes score alike.

A feature whose points and log-odds follow from each other exactly (compiler._one_number) is
binned straight to its label and that one number; otherwise to a bin number that both are
looked up by. The route is a matter of speed only: a spec scored both ways must give the same
bins, points, scores and PDs, and both must agree with the independent reference scorer
(tests/reference_scorer.py).
"""
from __future__ import annotations

import math

import pandas as pd
import pytest
import yaml

from scoremon.api import compile_sql
from scoremon.spec import parse_spec
from tests.compiler.through_sql import close_pd, score_columns
from tests.reference_scorer import score_frame

BINS = [(-math.inf, 20.0), (20.0, 35.0), (35.0, 50.0), (50.0, math.inf)]


def _spec(kind: str, rounding: str, values: list[float]):
    bins = [{"lower": lo, "upper": hi, kind: v} for (lo, hi), v in zip(BINS, values)]
    feature = {"name": "age", "type": "numeric", "bins": bins, "missing": {kind: values[-1]}}
    if kind == "woe":
        feature["coefficient"] = -0.9
    data = {
        "model": {"name": "routes", "version": "1", "owner": "tests", "effective_date": "2026-01-01",
                  "intended_use": "tests", "event": "y = 1", "performance_window_months": 12},
        "intercept": -2.1,
        "scaling": {"base_score": 600, "base_odds": 50, "pdo": 20, "rounding": rounding},
        "features": [feature],
        "grades": [{"name": "low", "lower": -math.inf, "upper": 600}, {"name": "high", "lower": 600, "upper": math.inf}],
    }
    return parse_spec(yaml.safe_dump(data))


CASES = [  # kind, rounding, values, looked up by bin number?
    ("woe", "none", [0.61, 0.2, -0.13, -0.52], False),         # points = (−factor)·log-odds
    ("log_odds", "total", [0.4, 0.1, -0.2, -0.35], False),     # rounding the total keeps the bins' numbers
    ("points", "none", [31.5, 12.0, -4.25, -20.0], False),     # (−factor)·(points / (−factor)) = points
    ("points", "none", [31.25, 12.0, -29.75, -20.0], False),   # log-odds = points / (−factor) only
    ("points", "per_bin", [31.0, 12.0, -4.0, -20.0], False),   # whole points: rounding changes nothing
    ("woe", "per_bin", [0.61, 0.2, -0.13, -0.52], True),       # rounded points no longer follow the log-odds
    ("points", "per_bin", [31.5, 12.0, -4.25, -20.0], True),
]


@pytest.mark.parametrize("kind, rounding, values, by_number", CASES)
def test_the_route_and_the_scores(kind, rounding, values, by_number):
    spec = _spec(kind, rounding, values)
    assert ('"__scoremon_bin_0"' in compile_sql(spec, "duckdb", "applications")) is by_number
    if kind == "points" and not by_number:
        # 31.25 and −29.75 are points whose log-odds do not give them back as (−factor)·log-odds:
        # that feature needs the route that starts from the points (the SQL divides for η)
        factor = spec.scaling.factor
        round_trip = all((-factor) * (p / -factor) == p for p in values)
        assert (" / CAST(-" in compile_sql(spec, "duckdb", "applications")) is (not round_trip)

    ages = [None, math.nan, -math.inf, 19.0, 20.0, 34.9, 35.0, 49.0, 50.0, math.inf]
    _, rows = score_columns(spec, {"row_id": ("INTEGER", list(range(len(ages)))), "age": ("DOUBLE", ages)}, "row_id")
    expected = score_frame(spec, pd.DataFrame({"age": pd.Series(ages, dtype=object)}))
    for got, (_, want) in zip(rows, expected.iterrows()):
        assert (got["age_bin"], got["age_points"], got["score"], got["grade"]) == \
            (want["age_bin"], want["age_points"], want["score"], want["grade"]), (ages[got["row_id"]], got)
        assert close_pd(got["pd"], want["pd"])
