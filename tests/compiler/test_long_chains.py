"""Features with many bins: the compiled CASE tests them in runs (compiler._runs), and every
value on, just below and just above every edge must still land where the reference scorer
(tests/reference_scorer.py, written independently of the compiler) puts it.

Half-open intervals with a declared closed side are common practice for scorecard bins.
"""
from __future__ import annotations

import math

import pandas as pd
import pytest
import yaml

from scoremon.spec import parse_spec
from tests.compiler.through_sql import score_columns
from tests.reference_scorer import score_frame

EDGES = [-40.0, -7.5, 0.0, 0.1, 2.0, 3.0, 17.0, 250.0, 1e6, 2.5e9, 1e15]  # 11 edges: runs of 4, 4, 3


def _spec(closed: str, edges: list[float], special: dict):
    bounds = [-math.inf] + edges + [math.inf]
    bins = [{"lower": lo, "upper": hi, "log_odds": round(0.1 * k - 0.4, 2)} for k, (lo, hi) in enumerate(zip(bounds, bounds[1:]))]
    data = {
        "model": {"name": "long chains", "version": "1", "owner": "tests", "effective_date": "2026-01-01",
                  "intended_use": "tests", "event": "y = 1", "performance_window_months": 12},
        "intercept": 0.25,
        "scaling": {"base_score": 600, "base_odds": 50, "pdo": 20, "rounding": "none"},
        "features": [{"name": "x", "type": "numeric", "closed": closed, "bins": bins, "missing": {"log_odds": 0.9},
                      **special}],
        "grades": [{"name": "all", "lower": -math.inf, "upper": math.inf}],
    }
    return parse_spec(yaml.safe_dump(data))


def _values(edges: list[float]) -> list:
    around = [v for e in edges for v in (math.nextafter(e, -math.inf), e, math.nextafter(e, math.inf))]
    return around + [None, math.nan, math.inf, -math.inf, -1e300, 1e300]


@pytest.mark.parametrize("closed", ["lower", "upper"])
@pytest.mark.parametrize("edge_count", [5, 6, 7, 9, 11])
@pytest.mark.parametrize("special", [{}, {"nan": "missing", "positive_infinity": "missing",
                                          "negative_infinity": "missing"}], ids=["default routes", "routed to missing"])
def test_every_value_around_every_edge_lands_in_the_reference_bin(closed, edge_count, special):
    edges = EDGES[:edge_count]
    spec = _spec(closed, edges, special)
    values = _values(edges)
    _, rows = score_columns(spec, {"row_id": ("INTEGER", list(range(len(values)))), "x": ("DOUBLE", values)}, "row_id")
    expected = score_frame(spec, pd.DataFrame({"x": pd.Series(values, dtype=object)}))
    assert len(rows) == len(expected)
    for got, (_, want) in zip(rows, expected.iterrows()):
        assert (got["x_bin"], got["x_points"], got["score"]) == (want["x_bin"], want["x_points"], want["score"]), \
            (values[got["row_id"]], got, dict(want))
