"""Bench line (g): one Newton step of `scoremon fit` ÷ a bare scan of the same columns.

The design is the bench spec's numeric and categorical characteristics with a WoE per bin
(a categorical group's log-odds taken as its WoE); the event is 1 below the first inner edge
of the first numeric characteristic (any 0/1 column costs the same). One step is the pass a
Newton iteration makes for one model: gradient, Hessian and loss summed in the engine.
"""
from __future__ import annotations

import numpy as np
from sqlglot import exp

from ..develop.design import Design, pass_query
from ..spec.model import CategoricalFeature, NumericFeature, Spec
from ..trees import case, column, integer, number
from . import queries


def _as_woe(value):
    return value.model_copy(update={"woe": value.woe if value.woe is not None else value.log_odds, "log_odds": None})


def newton_design(spec: Spec, table: str) -> Design:
    """The fit's design over the bench table (see the module docstring)."""
    features = []
    for feature in spec.features:
        if isinstance(feature, NumericFeature):
            features.append(feature.model_copy(update={"coefficient": None}))
        elif isinstance(feature, CategoricalFeature):
            features.append(feature.model_copy(update={
                "groups": [_as_woe(g) for g in feature.groups], "other": _as_woe(feature.other),
                "missing": _as_woe(feature.missing)}))
    first = features[0]
    edge = sorted(first.bins, key=lambda b: b.lower)[0].upper
    event = case([(exp.LT(this=column(first.column or first.name), expression=number(edge)), integer(1))], integer(0))
    return Design(queries.relation(table), tuple(features), event)


def newton_beta(design: Design) -> np.ndarray:
    """The coefficients the timed step is taken at (any will do: a pass costs the same)."""
    return np.r_[-2.0, np.full(len(design.features), -0.5)]


def newton_step(design: Design) -> exp.Select:
    """One Newton step's pass for one model (the all-rows model of an unpenalised fit) as one
    aggregate query, as it runs on PostgreSQL and Spark."""
    return pass_query(design, {1: newton_beta(design)})


def design_columns(design: Design) -> tuple[list[str], list[str]]:
    """(numeric, text) source columns of the design, for the bare scan beside it."""
    numeric = [f.column or f.name for f in design.features if isinstance(f, NumericFeature)]
    texts = [f.column or f.name for f in design.features if isinstance(f, CategoricalFeature)]
    return numeric, texts
