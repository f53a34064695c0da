"""The benchmark's workload: a synthetic spec of realistic shape and the rows it scores.

The spec has twelve binned numeric characteristics (six to ten bins each), three categorical
ones (5, 12 and 30 values), one linear term and ten reason statements of which three are
returned per row — the shape of a typical application scorecard. The rows are drawn inside
DuckDB from a hash of the row number, so every run (and every thread count) sees the same
data, with NULLs, NaN, ±infinity and unseen categories in small shares so that every branch
of the scoring SQL is exercised. Each row carries a unique key (its row number), from which
`fit` makes its cross-validation folds; :func:`development_rows` adds an outcome drawn from the
spec's own PD, so that the rows can be binned and fitted as a development table.

Everything here is built as sqlglot trees from our own constants; only a table name chosen by
the caller enters, and only as a quoted identifier.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import yaml
from sqlglot import exp

from ..compiler import compile_model
from ..trees import case, column, identifier, integer, number, text
from ..spec import parse_spec
from ..spec.model import Spec


@dataclass(frozen=True)
class NumericColumn:
    """A numeric input column and the binned feature that reads it.

    Values are ``low + (high - low) * u ** skew`` for a uniform ``u``; ``whole`` columns hold
    integers (no NaN or infinity can occur there, so the compiled SQL leaves those tests out).
    """

    name: str
    low: float
    high: float
    skew: float
    bins: int
    whole: bool
    slope: float  # WoE falls (or rises) by this much from bin to bin
    edges: tuple[float, ...] = ()  # inner edges, when equal shares would repeat an edge


@dataclass(frozen=True)
class CategoryColumn:
    """A text input column with ``values`` categories, grouped into ``groups`` bins."""

    name: str
    prefix: str
    values: int
    groups: int


NUMERIC = (
    NumericColumn("age", 18, 90, 1.6, 8, True, 0.18),
    NumericColumn("income", 0, 250_000, 2.2, 10, False, 0.12),
    NumericColumn("months_at_address", 0, 480, 2.0, 7, True, 0.10),
    NumericColumn("months_employed", 0, 480, 2.0, 8, True, 0.11),
    NumericColumn("debt_to_income", 0, 1.5, 1.3, 9, False, -0.14),
    NumericColumn("revolving_utilisation", 0, 1.2, 1.0, 10, False, -0.16),
    NumericColumn("delinquencies_24m", 0, 12, 4.0, 6, True, -0.30, (1, 2, 3, 4, 6)),
    NumericColumn("inquiries_6m", 0, 15, 3.0, 7, True, -0.20, (1, 2, 3, 4, 6, 9)),
    NumericColumn("open_accounts", 0, 40, 1.8, 7, True, 0.06),
    NumericColumn("oldest_account_months", 0, 600, 1.5, 9, True, 0.09),
    NumericColumn("total_balance", 0, 500_000, 2.5, 10, False, -0.05),
    NumericColumn("payment_to_income", 0, 0.8, 1.7, 8, False, -0.12),
)
CATEGORICAL = (
    CategoryColumn("housing", "H", 5, 3),
    CategoryColumn("occupation", "OCC", 12, 4),
    CategoryColumn("region", "R", 30, 5),
)
LINEAR = NumericColumn("bureau_score", 300, 900, 1.0, 0, False, 0.004)
UNSEEN = "UNSEEN"  # a category no group lists: it goes to the catch-all bin
REASON_GROUPS = (
    ("DELQ", "Recent delinquencies", ("delinquencies_24m",)),
    ("UTIL", "High revolving utilisation", ("revolving_utilisation", "total_balance")),
    ("DTI", "High debt relative to income", ("debt_to_income", "payment_to_income")),
    ("INQ", "Many recent credit inquiries", ("inquiries_6m",)),
    ("HIST", "Short credit history", ("oldest_account_months", "open_accounts")),
    ("STAB", "Short time at address or employer", ("months_at_address", "months_employed")),
    ("INC", "Low income", ("income",)),
    ("AGE", "Applicant age", ("age",)),
    ("BUR", "Low bureau score", ("bureau_score",)),
    ("DEMO", "Housing, occupation and region", ("housing", "occupation", "region")),
)
MISSING_SHARE, NAN_SHARE, INFINITY_SHARE, UNSEEN_SHARE = 0.02, 0.002, 0.0005, 0.005


# ---------------------------------------------------------------- the spec

def _edges(c: NumericColumn) -> list[float]:
    """Inner bin edges at equal shares of the drawn distribution, rounded to read well."""
    if c.edges:
        return [float(e) for e in c.edges]
    edges = []
    for k in range(1, c.bins):
        value = c.low + (c.high - c.low) * (k / c.bins) ** c.skew
        value = round(value) if c.whole or value > 100 else round(value, 3)
        if not edges or value > edges[-1]:
            edges.append(float(value))
    return edges


def _numeric_feature(c: NumericColumn) -> dict:
    edges = [float("-inf")] + _edges(c) + [float("inf")]
    middle = (len(edges) - 2) / 2
    bins = [{"lower": lo, "upper": hi, "woe": round(c.slope * (k - middle), 4)}
            for k, (lo, hi) in enumerate(zip(edges, edges[1:]))]
    return {"name": c.name, "type": "numeric", "coefficient": -0.85, "bins": bins,
            "missing": {"woe": round(-abs(c.slope), 4)}}


def category_values(c: CategoryColumn) -> list[str]:
    return [f"{c.prefix}{k:02d}" for k in range(1, c.values + 1)]


def _categorical_feature(c: CategoryColumn) -> dict:
    values = category_values(c)
    # the last value is left to the catch-all, with the unseen ones
    listed = values[:-1]
    size = -(-len(listed) // c.groups)
    groups = [{"label": f"group_{g + 1}", "values": listed[g * size:(g + 1) * size],
               "log_odds": round(0.15 * (g - c.groups / 2), 4)}
              for g in range(c.groups) if listed[g * size:(g + 1) * size]]
    return {"name": c.name, "type": "categorical", "groups": groups,
            "other": {"label": "other", "log_odds": 0.1}, "missing": {"log_odds": 0.2}}


def bench_spec_data(rounding: str = "none") -> dict:
    """The synthetic bench spec as plain data (what its YAML file would hold)."""
    features = [_numeric_feature(c) for c in NUMERIC]
    features += [_categorical_feature(c) for c in CATEGORICAL]
    features.append({"name": LINEAR.name, "type": "linear", "coefficient": -LINEAR.slope,
                     "lower": LINEAR.low, "upper": LINEAR.high, "center": 600.0,
                     "missing": {"log_odds": 0.3}})
    grades = [("A", 680, float("inf")), ("B", 640, 680), ("C", 610, 640), ("D", 580, 610),
              ("E", 550, 580), ("F", float("-inf"), 550)]
    return {
        "model": {"name": "bench_scorecard", "version": "1", "owner": "scoremon benchmark",
                  "effective_date": date(2026, 1, 1), "intended_use": "speed measurement only",
                  "event": "synthetic", "performance_window_months": 12},
        "intercept": -2.6,
        "scaling": {"base_score": 600, "base_odds": 30, "pdo": 20, "rounding": rounding},
        "features": features,
        "grades": [{"name": n, "lower": lo, "upper": hi} for n, lo, hi in grades],
        "reasons": {"count": 3, "statements": [{"code": code, "text": words, "features": list(names)}
                                               for code, words, names in REASON_GROUPS]},
    }


def bench_spec(rounding: str = "none") -> Spec:
    """The synthetic bench spec, validated exactly as a user's spec file would be."""
    return parse_spec(yaml.safe_dump(bench_spec_data(rounding), sort_keys=False), file="<bench spec>")


# ---------------------------------------------------------------- the rows

ROW = "row_number"
KEY = "application_id"  # the row number, kept: unique, a whole number (fit's folds come from it)
OUTCOME = "defaulted"  # 1 for an event, in the development rows
OUTCOME_SEED = 7_000  # no feature draws from this seed: the event draw is independent of the values


def _uniform(seed: int, of: str = ROW) -> exp.Expression:
    """A value in [0, 1) drawn from a hash of column ``of`` (the row number) and ``seed`` (deterministic)."""
    modulus = 1_000_003
    hashed = exp.Anonymous(this="hash", expressions=[column(of), integer(seed)])
    remainder = exp.Mod(this=hashed, expression=integer(modulus))
    return exp.Div(this=exp.Cast(this=remainder, to=exp.DataType.build("DOUBLE")), expression=number(modulus))


def _below(seed: int, share: float) -> exp.Expression:
    return exp.LT(this=_uniform(seed), expression=number(share))


def _numeric_value(c: NumericColumn, seed: int) -> exp.Expression:
    shaped = exp.Pow(this=_uniform(seed), expression=number(c.skew))
    value = exp.Add(this=number(c.low), expression=exp.Mul(this=number(c.high - c.low), expression=shaped))
    if c.whole:
        return case([(_below(seed + 1, MISSING_SHARE), exp.Null())],
                    exp.Cast(this=exp.Floor(this=value), to=exp.DataType.build("INTEGER")))
    special = _uniform(seed + 2)
    odd = [
        (_below(seed + 1, MISSING_SHARE), exp.Null()),
        (exp.LT(this=special.copy(), expression=number(NAN_SHARE)), exp.Cast(this=text("NaN"), to=exp.DataType.build("DOUBLE"))),
        (exp.LT(this=special.copy(), expression=number(NAN_SHARE + INFINITY_SHARE)),
         exp.Cast(this=text("Infinity"), to=exp.DataType.build("DOUBLE"))),
    ]
    return case(odd, value)


def _category_value(c: CategoryColumn, seed: int) -> exp.Expression:
    # a skewed draw: the first categories are the common ones, as in real books
    index = exp.Floor(this=exp.Mul(this=number(c.values), expression=exp.Pow(this=_uniform(seed), expression=number(1.7))))
    values = category_values(c)
    picks = [(exp.EQ(this=index.copy(), expression=number(k)), text(v)) for k, v in enumerate(values[:-1])]
    return case([(_below(seed + 1, MISSING_SHARE), exp.Null()),
                 (_below(seed + 2, UNSEEN_SHARE), text(UNSEEN))] + picks, text(values[-1]))


def input_columns() -> list[str]:
    """The spec's input columns, in table order (the key follows them)."""
    return [c.name for c in NUMERIC] + [c.name for c in CATEGORICAL] + [LINEAR.name]


def characteristic_columns() -> list[str]:
    """The columns `bin` and `fit` develop a model from: the spec's 15 binned characteristics
    (its linear term stays out, as in the Newton-step line)."""
    return [c.name for c in NUMERIC] + [c.name for c in CATEGORICAL]


def text_columns() -> list[str]:
    return [c.name for c in CATEGORICAL]


def generate_rows(rows: int, start: int = 0) -> exp.Select:
    """``rows`` synthetic input rows (row numbers ``start`` …), one column per spec feature, then the key."""
    selected = []
    for k, c in enumerate(NUMERIC):
        selected.append(exp.alias_(_numeric_value(c, 10 * k), c.name, quoted=True))
    for k, c in enumerate(CATEGORICAL):
        selected.append(exp.alias_(_category_value(c, 500 + 10 * k), c.name, quoted=True))
    selected.append(exp.alias_(_numeric_value(LINEAR, 900), LINEAR.name, quoted=True))
    selected.append(exp.alias_(exp.Cast(this=column(ROW), to=exp.DataType.build("BIGINT")), KEY, quoted=True))
    numbers = exp.Anonymous(this="range", expressions=[integer(start), integer(start + rows)])
    source = exp.Table(this=numbers, alias=exp.TableAlias(this=identifier("numbers"), columns=[identifier(ROW)]))
    return exp.select(*selected).from_(source)


def create_table(table: str, rows: int, start: int = 0) -> exp.Create:
    """``CREATE TABLE "<table>" AS`` the generated rows."""
    return exp.Create(this=exp.to_table(identifier(table)), kind="TABLE", expression=generate_rows(rows, start))


def development_rows(spec: Spec, table: str, float_columns: list[str] | None = None) -> exp.Select:
    """The rows of ``table`` (made by :func:`generate_rows`) with an outcome: an event where a
    uniform draw from a hash of the key falls below the PD ``spec`` gives the row (about 7 %
    events). Every characteristic then carries the signal its WoE says, as in a real book."""
    kept = input_columns() + [KEY]
    scored = compile_model(spec, exp.to_table(identifier(table)), kept, float_columns).subquery("scored")
    drawn = exp.LT(this=_uniform(OUTCOME_SEED, KEY), expression=column("pd"))
    outcome = exp.alias_(case([(drawn, integer(1))], integer(0)), OUTCOME, quoted=True)
    return exp.select(*[column(name) for name in kept], outcome).from_(scored)
