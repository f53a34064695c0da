"""The queries the benchmark times, as sqlglot trees over one input table.

* :func:`bare_scan` reads every input column the spec reads and aggregates it — the floor
  any scoring query pays;
* :func:`hand_written_score` is the score a person would write without scoremon: one CASE
  per feature with the points typed in (two decimals, as on a printed scorecard), summed,
  PD from the score, a grade CASE;
* :func:`grade_summary` wraps a scoring query into the aggregate both scorers are timed on:
  rows, mean score and mean PD per grade;
* :func:`reason_summary` also counts every reason slot, so that the reasons cannot be pruned;
* :func:`binning_only` keeps only the scoring query's first step, finding each feature's bin,
  and sums the numbers it yields — what scoring costs before any points, score or PD;
* :func:`input_copy` selects the input columns unchanged (the Parquet copy baseline).
"""
from __future__ import annotations

from typing import Sequence

from sqlglot import exp

from ..spec.model import CategoricalFeature, LinearFeature, NumericFeature, Spec
from ..spec.terms import feature_terms, numeric_bins_in_order
from ..trees import INTERNAL, alias, case, column, identifier, text

SCORED = "scored"


def relation(table: str) -> exp.Table:
    return exp.to_table(identifier(table))


def bare_scan(table: str, numeric: Sequence[str], texts: Sequence[str]) -> exp.Select:
    """``SELECT COUNT(*), SUM(<number>)…, MAX(<text>)… FROM table``: every value is read."""
    aggregates: list[exp.Expression] = [alias(exp.Count(this=exp.Star()), "rows")]
    aggregates += [alias(exp.Sum(this=column(name)), f"{name}_sum") for name in numeric]
    aggregates += [alias(exp.Max(this=column(name)), f"{name}_max") for name in texts]
    return exp.select(*aggregates).from_(relation(table))


def _typed(value: float) -> exp.Expression:
    """A number as a person types it: two decimals, no cast."""
    rounded = round(float(value), 2)
    literal = exp.Literal.number(repr(abs(rounded)))
    return exp.Neg(this=literal) if rounded < 0 else literal


def _hand_feature(spec: Spec, feature) -> exp.Expression:
    x = column(feature.source_column)
    terms = feature_terms(spec, feature)
    missing = (exp.Is(this=x.copy(), expression=exp.Null()), _typed(terms.bins[-1].points))
    if isinstance(feature, NumericFeature):
        ordered = numeric_bins_in_order(feature)
        compare = exp.LT if feature.closed == "lower" else exp.LTE
        branches = [(compare(this=x.copy(), expression=_typed(b.upper)), _typed(t.points))
                    for b, t in zip(ordered[:-1], terms.bins)]
        return case([missing] + branches, _typed(terms.bins[len(ordered) - 1].points))
    if isinstance(feature, CategoricalFeature):
        groups = {g.label: g for g in feature.groups}
        branches = [(exp.In(this=x.copy(), expressions=[text(str(v)) if isinstance(v, str) else exp.Literal.number(v)
                                                         for v in groups[t.label].values]), _typed(t.points))
                    for t in terms.bins[:-2]]
        return case([missing] + branches, _typed(terms.bins[-2].points))
    if not isinstance(feature, LinearFeature):
        raise TypeError(f"unknown feature kind {type(feature).__name__}")
    slope = -(spec.scaling.factor * feature.coefficient / feature.scale)
    # plain GREATEST / LEAST as a person writes them (ignore_nulls keeps sqlglot from wrapping
    # each in a NULL test; x is not NULL past the first branch)
    clipped = exp.Least(this=exp.Greatest(this=x.copy(), expressions=[_typed(feature.lower)], ignore_nulls=True),
                        expressions=[_typed(feature.upper)], ignore_nulls=True)
    centred = exp.paren(exp.Sub(this=clipped, expression=_typed(feature.center)), copy=False)
    return case([missing], exp.Mul(this=exp.Literal.number(f"{slope:.6f}"), expression=centred))


def hand_written_score(spec: Spec, table: str) -> exp.Select:
    """score, pd and grade computed the plain way: one CASE per feature, summed."""
    base = spec.scaling.offset - spec.scaling.factor * spec.intercept
    score: exp.Expression = _typed(base)
    for feature in spec.features:
        score = exp.Add(this=score, expression=_hand_feature(spec, feature))
    inner = exp.select(exp.alias_(score, "score", quoted=True)).from_(relation(table))
    # score = offset − factor·η, so η = (offset − score) / factor
    eta = exp.Div(this=exp.paren(exp.Sub(this=_typed(spec.scaling.offset), expression=column("score")), copy=False),
                  expression=exp.Literal.number(f"{spec.scaling.factor:.6f}"))
    pd = exp.Div(this=exp.Literal.number("1"),
                 expression=exp.paren(exp.Add(this=exp.Literal.number("1"), expression=exp.Exp(this=exp.Neg(this=exp.paren(eta)))), copy=False))
    grades = sorted(spec.grades, key=lambda g: g.lower, reverse=True)
    grade = case([(exp.GTE(this=column("score"), expression=_typed(g.lower)), text(g.name)) for g in grades[:-1]],
                 text(grades[-1].name))
    return exp.select(column("score"), exp.alias_(pd, "pd", quoted=True), exp.alias_(grade, "grade", quoted=True)) \
        .from_(inner.subquery(identifier("hand"), copy=False))


def grade_summary(scoring: exp.Select) -> exp.Select:
    """Rows, mean score and mean PD per grade of a scoring query's output."""
    grade = column("grade")
    return (exp.select(grade.copy(), alias(exp.Count(this=exp.Star()), "rows"), alias(exp.Avg(this=column("score")), "mean_score"),
                       alias(exp.Avg(this=column("pd")), "mean_pd"))
            .from_(scoring.subquery(identifier(SCORED)))
            .group_by(grade.copy()).order_by(grade.copy()))


def reason_summary(scoring: exp.Select, reasons: Sequence[str]) -> exp.Select:
    """As :func:`grade_summary`, plus the number of rows given each reason slot."""
    query = grade_summary(scoring)
    return query.select(*[alias(exp.Count(this=column(name)), f"{name}_rows") for name in reasons], copy=False)


def binning_only(scoring: exp.Select) -> exp.Select:
    """The scoring query's ``binned`` step alone, each number it yields summed (labels unread)."""
    steps = {cte.alias: cte.this for cte in scoring.args["with_"].expressions}
    binned = steps["binned"]
    numbers = [e.alias for e in binned.expressions if e.alias.startswith(INTERNAL)]
    query = exp.select(*[alias(exp.Sum(this=column(name)), f"{name}_sum") for name in numbers]).from_(relation("binned"))
    return query.with_(identifier("binned"), as_=binned.copy(), copy=False)


def input_copy(table: str, columns: Sequence[str]) -> exp.Select:
    return exp.select(*[column(name) for name in columns]).from_(relation(table))
