"""Hypothesis strategies: random valid specs, and input columns that probe every edge of them.

A scenario is a spec (as plain data, ready for YAML) plus one typed input column per feature.
The columns deliberately hold each cut point, the doubles just above and below it
(``math.nextafter``), NULL, NaN, ±infinity, the largest and smallest doubles, ±0, unseen
categories and categories that differ from a listed one only by case or a space.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from hypothesis import strategies as st

from tests.reference_scorer import ReferenceScorer

KEY = "row_id"
# feature names exercise quoting: quotes, spaces, reserved words, mixed case, non-ASCII,
# and names of scored-output columns
FEATURE_NAMES = ["age", "Income", "select", 'quote"d', "it's", "space name", "ünïcode", "order", "x",
                 "score", "grade", "PD"]
LABELS = ["low", "mid", "high", "very high", "it's odd", "none of these", "other", "missing", "Gap",
          "u-ü", "seven", "eight", "nine"]
TEXT_CATEGORIES = ["A", "B", "N1", "S1", "O'Neil", "x;y", "ünï", "", "NULL", "1", "Z z", "a"]
INTEGER_CATEGORIES = [-3, -1, 0, 1, 2, 3, 7, 10, 42, 2**31, 2**40]
GRADE_NAMES = ["A", "B", "C", "D", "it's E"]
REASON_CODES = ["R1", "R2", "R3", "O'Code", "R 5", "R6"]
INT32 = (-(2**31), 2**31 - 1)
INT64 = (-(2**63), 2**63 - 1)
DOUBLE_SPECIALS = [None, math.nan, math.inf, -math.inf, 1.7976931348623157e308, -1.7976931348623157e308,
                   5e-324, -5e-324, 0.0, -0.0, 1e-300, -1e300, 2.2250738585072014e-308]
INTEGER_SPECIALS = [None, 0, 1, -1, 2**31 - 1, -(2**31), 2**62, -(2**62), INT64[1], INT64[0]]

finite = dict(allow_nan=False, allow_infinity=False)
small = st.one_of(st.floats(-3, 3, **finite), st.sampled_from([0.0, 0.5, -0.5, 1.0]))
points = st.one_of(st.floats(-120, 120, **finite), st.integers(-240, 240).map(lambda v: v / 2),
                   st.sampled_from([0.0, 10.0, 20.0]))
# cut points stay well inside ±2**53 so that whole-number columns compare exactly
cut_point = st.one_of(
    st.integers(-1000, 1000).map(float),
    st.integers(-2000, 2000).map(lambda v: v / 2),
    st.floats(-1e6, 1e6, **finite),
    st.sampled_from([0.0, -0.0, 1e-300, -1e-300, 5e-324, 0.1, 2.675]),
)


@dataclass(frozen=True)
class Scenario:
    spec_data: dict
    columns: dict  # column name → (SQL type, values)


# a coarse spec draws every value from a short list, so that equal points (and so tied
# reason shortfalls, and scores on grade edges) are common rather than rare
COARSE = {"woe": st.sampled_from([0.0, 0.5, 1.0]), "log_odds": st.sampled_from([0.0, 0.5, 1.0]),
          "points": st.sampled_from([0.0, 5.0, 10.0])}


def _value(draw, kind: str, coarse: bool) -> dict:
    if coarse:
        return {kind: draw(COARSE[kind])}
    return {kind: draw(small if kind in ("woe", "log_odds") else points)}


def _nudged(values) -> list:
    """Each value and the doubles just below and above it."""
    out = []
    for v in values:
        out += [v, math.nextafter(v, -math.inf), math.nextafter(v, math.inf)]
    return out


def _near_whole(values, bounds) -> list[int]:
    """Whole numbers on both sides of each value, kept inside the column type's range."""
    out = []
    for v in values:
        out += [math.floor(v) - 1, math.floor(v), math.ceil(v), math.ceil(v) + 1]
    return [i for i in out if bounds[0] <= i <= bounds[1]]


def _numeric_column(draw, anchors, kind: str | None = None) -> tuple[str, list]:
    kind = kind or draw(st.sampled_from(["DOUBLE", "BIGINT", "INTEGER"]))
    if kind == "DOUBLE":
        extra = draw(st.lists(st.floats(**finite), max_size=3))
        return kind, _nudged(anchors) + DOUBLE_SPECIALS + extra
    bounds = INT32 if kind == "INTEGER" else INT64
    extra = draw(st.lists(st.integers(*bounds), max_size=3))
    return kind, _near_whole(anchors, bounds) + [v for v in INTEGER_SPECIALS if v is None or bounds[0] <= v <= bounds[1]] + extra


@st.composite
def numeric_feature(draw, name: str, coarse: bool):
    column_kind = draw(st.sampled_from(["DOUBLE", "BIGINT", "INTEGER"]))
    # a DOUBLE column may also meet cut points of any finite size
    element = st.one_of(cut_point, st.floats(**finite)) if column_kind == "DOUBLE" else cut_point
    # up to 11 cut points: chains of 6 or more are compiled as runs (compiler._runs)
    cuts = sorted(draw(st.lists(element, min_size=0, max_size=11, unique=True)))
    edges = [-math.inf] + cuts + [math.inf]
    closed = draw(st.sampled_from(["lower", "upper"]))
    kind = draw(st.sampled_from(["woe", "log_odds", "points"]))
    n = len(edges) - 1
    labels = draw(st.one_of(st.none(), st.lists(st.sampled_from(LABELS), min_size=n + 1, max_size=n + 1, unique=True)))
    bins = []
    for i in range(n):
        item = {"lower": edges[i], "upper": edges[i + 1], **_value(draw, kind, coarse)}
        if labels:
            item["label"] = labels[i]
        bins.append(item)
    missing = _value(draw, kind, coarse)
    if labels:
        missing["label"] = labels[n]
    feature = {"name": name, "type": "numeric", "closed": closed,
               "bins": draw(st.permutations(bins)), "missing": missing}
    if kind == "woe":
        feature["coefficient"] = 1.0 if coarse else draw(small)
    known = [b.get("label") or ReferenceScorer.default_label(b["lower"], b["upper"], closed) for b in bins]
    known.append(missing.get("label", "missing"))
    for route in ("nan", "positive_infinity", "negative_infinity"):
        target = draw(st.one_of(st.none(), st.sampled_from(known)))
        if target is not None:
            feature[route] = target
    return feature, _numeric_column(draw, cuts, column_kind)


@st.composite
def categorical_feature(draw, name: str, coarse: bool):
    as_text = draw(st.booleans())
    values = draw(st.lists(st.sampled_from(TEXT_CATEGORIES if as_text else INTEGER_CATEGORIES),
                           min_size=1, max_size=10, unique=True))
    n_groups = draw(st.integers(1, min(4, len(values))))
    labels = draw(st.lists(st.sampled_from(LABELS), min_size=n_groups + 2, max_size=n_groups + 2, unique=True))
    kind = draw(st.sampled_from(["woe", "log_odds", "points"]))
    members: list[list] = [[v] for v in values[:n_groups]]
    listed_other = []
    for v in values[n_groups:]:
        place = draw(st.integers(-1, n_groups - 1))
        (listed_other if place < 0 else members[place]).append(v)
    groups = [{"label": labels[i], "values": members[i], **_value(draw, kind, coarse)} for i in range(n_groups)]
    other = {"label": labels[n_groups], **_value(draw, kind, coarse)}
    if listed_other:
        other["values"] = listed_other
    missing = {"label": labels[n_groups + 1], **_value(draw, kind, coarse)}
    feature = {"name": name, "type": "categorical", "groups": draw(st.permutations(groups)),
               "other": other, "missing": missing}
    if kind == "woe":
        feature["coefficient"] = 1.0 if coarse else draw(small)
    if as_text:
        look_alikes = [w for v in values for w in (v.lower(), v.upper(), v + " ", " " + v, v.swapcase())]
        return feature, ("VARCHAR", values + look_alikes + ["never seen", None])
    column_kind = draw(st.sampled_from(["BIGINT", "INTEGER"]))
    bounds = INT32 if column_kind == "INTEGER" else INT64
    near = [w for v in values for w in (v - 1, v, v + 1)] + [999, 2**62, None]
    return feature, (column_kind, [w for w in near if w is None or bounds[0] <= w <= bounds[1]])


@st.composite
def linear_feature(draw, name: str, coarse: bool):
    lower, upper = sorted(draw(st.lists(st.one_of(st.integers(-1000, 1000).map(float), st.floats(-1e3, 1e3, **finite)),
                                        min_size=2, max_size=2, unique=True)))
    center = draw(st.one_of(st.just(0.0), st.floats(-100, 100, **finite)))
    scale = draw(st.one_of(st.sampled_from([1.0, 0.5, -2.0, 3.7, 100.0]), st.floats(0.01, 100, **finite)))
    missing = _value(draw, draw(st.sampled_from(["log_odds", "points"])), coarse)
    if draw(st.booleans()):
        missing["label"] = draw(st.sampled_from(LABELS))
    feature = {"name": name, "type": "linear", "coefficient": draw(small), "lower": lower, "upper": upper,
               "center": center, "scale": scale, "missing": missing}
    return feature, _numeric_column(draw, [lower, upper, center])


def _grades(draw, coarse: bool) -> list[dict]:
    # coarse specs score 600 plus multiples of 5 when bins give points: put edges on those scores
    edge = st.integers(112, 132).map(lambda v: v * 5.0) if coarse else st.one_of(
        st.integers(0, 1200).map(float), st.floats(-500, 1500, **finite))
    cuts = sorted(draw(st.lists(edge, max_size=4, unique=True)))
    edges = [-math.inf] + cuts + [math.inf]
    names = draw(st.permutations(GRADE_NAMES))
    grades = [{"name": names[i], "lower": edges[i], "upper": edges[i + 1]} for i in range(len(edges) - 1)]
    return draw(st.permutations(grades))


def _reasons(draw, names: list[str], coarse: bool) -> dict:
    order = draw(st.permutations(names))
    groups: dict[int, list[str]] = {}
    for name in order:
        place = draw(st.integers(-1, len(names) - 1))
        if place >= 0:
            groups.setdefault(place, []).append(name)
    statements = []
    for code, place in zip(REASON_CODES, sorted(groups)):
        statement = {"code": code, "text": f"statement {code}", "features": groups[place]}
        reference = None if coarse else draw(st.one_of(st.none(), st.floats(-50, 150, **finite)))
        if reference is not None:
            statement["reference"] = reference
        statements.append(statement)
    return {"count": draw(st.integers(0, min(4, len(statements)))), "statements": statements}


@st.composite
def scenarios(draw) -> Scenario:
    n_features = draw(st.integers(1, 5))
    coarse = draw(st.booleans())
    names = draw(st.lists(st.sampled_from(FEATURE_NAMES), min_size=n_features, max_size=n_features,
                          unique_by=str.casefold))
    features, columns = [], {}
    for position, name in enumerate(names):
        maker = draw(st.sampled_from([numeric_feature, categorical_feature, linear_feature]))
        feature, (kind, pool) = draw(maker(name, coarse))
        if draw(st.booleans()):
            feature["column"] = f"col_{position}"
        features.append(feature)
        columns[feature.get("column", name)] = (kind, pool)

    rows = max(len(pool) for _, pool in columns.values()) + 2
    filled = {KEY: ("INTEGER", list(range(rows)))}
    for column, (kind, pool) in columns.items():
        values = list(draw(st.permutations(pool)))
        values += draw(st.lists(st.sampled_from(pool), min_size=rows - len(values), max_size=rows - len(values)))
        filled[column] = (kind, values)

    spec = {
        "model": {"name": "property model", "version": "1", "owner": "tests", "effective_date": "2026-01-01",
                  "intended_use": "property tests", "event": "y = 1", "performance_window_months": 12},
        "intercept": 0.0 if coarse else draw(st.floats(-5, 5, **finite)),
        "scaling": {"base_score": 600.0 if coarse else draw(st.one_of(st.integers(100, 1000).map(float),
                                                                     st.floats(100, 1000, **finite))),
                    "base_odds": 1.0 if coarse else draw(st.one_of(st.sampled_from([1.0, 50.0, 20.0]),
                                                                  st.floats(0.5, 100, **finite))),
                    "pdo": draw(st.one_of(st.sampled_from([20.0, 40.0, 50.0]), st.floats(5, 80, **finite))),
                    "rounding": draw(st.sampled_from(["none", "per_bin", "total"]))},
        "features": features,
        "grades": _grades(draw, coarse),
        "reasons": _reasons(draw, names, coarse),
    }
    return Scenario(spec, filled)
