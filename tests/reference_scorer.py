"""A second, independent scorer used to check the compiled SQL row by row.

It is written from the documented semantics only (the docstrings of ``scoremon.spec.model``
and ``scoremon.spec.terms`` and the README's "The spec"); it reads the validated model's
attributes but never calls ``scoremon.spec.terms``, ``scoremon.spec.canonical`` or the
compiler, so a mistake there cannot hide by being repeated here.

Plain Python floats carry every value and each sum is taken in the documented order, so
points, scores, grades and reasons can be compared with the SQL exactly:

* factor = pdo / ln 2, offset = base_score − factor · ln(base_odds);
* a bin adds ``coefficient * woe``, ``log_odds`` or ``-(points / factor)`` to η and scores
  ``-(factor * contribution)``, or its ``points`` as written;
* a linear feature adds ``(coefficient / scale) * (clip(x) - center)`` to η and scores
  ``-(factor * (coefficient / scale)) * (clip(x) - center)``;
* base points = offset − factor · intercept; score = base points + Σ points in feature
  order; η = intercept + Σ contributions in feature order; PD = 1 / (1 + e^(−η)), from η, or
  with ``pd_from: score`` (the default when the score is rounded) from (offset − score) / factor;
* a whole-number or DECIMAL value is compared with the bin edges exactly, as the spec writes
  them (the shortest decimal of each edge's double); a DOUBLE value with the edges' doubles;
* rounding is half away from zero, a fraction short of the half by at most
  max(|value|, 128) · 2⁻⁴⁸ counting as the half: per bin (each bin's points,
  each row's linear points and the base points) or on the total score;
* a reason statement's shortfall = reference − (its features' points summed in listed
  order); the reference defaults to the sum, in listed order, of each feature's largest
  possible points; shortfalls are held to whole billionths of a point (round(shortfall ×
  10⁹), half up; 0 below half a billionth) and the positive ones ranked, largest first, ties to the
  statement listed first.

Input values: ``None`` or ``pd.NA`` is SQL NULL; a float NaN is NaN (so a NULL in a numeric
column needs an ``object`` column).
"""
from __future__ import annotations

import math
import numbers
from decimal import ROUND_FLOOR, Decimal, localcontext

import pandas as pd

from scoremon.spec.model import CategoricalFeature, LinearFeature, NumericFeature, Spec



def round_half_away(value: float) -> float:
    """Half away from zero, a fraction short of the half by at most max(|value|, 128) · 2⁻⁴⁸
    counting as the half (README, "The spec", scaling); exact, with Decimal."""
    size = Decimal(abs(value))  # the exact double
    if size >= 2 ** 52:
        return value
    with localcontext() as context:
        context.prec = 200  # enough for every step below to be exact
        whole = size.to_integral_value(rounding=ROUND_FLOOR)
        hold = max(size, Decimal(128)) * Decimal(2.0 ** -48)
        rounded = whole + 1 if Decimal("0.5") - (size - whole) <= hold else whole
    return float(rounded if value > 0 else -rounded) + 0.0


def is_null(value) -> bool:
    return value is None or value is pd.NA


def is_nan(value) -> bool:
    return isinstance(value, float) and math.isnan(value)


class ReferenceScorer:
    """Scores rows of a DataFrame as the spec's documentation says; see the module docstring."""

    def __init__(self, spec: Spec):
        self.spec = spec
        self.factor = spec.scaling.pdo / math.log(2.0)
        self.offset = spec.scaling.base_score - self.factor * math.log(spec.scaling.base_odds)
        self.per_bin = spec.scaling.rounding == "per_bin"
        self.on_total = spec.scaling.rounding == "total"
        self.by_name = {f.name: f for f in spec.features}

    # -- one bin's value

    def contribution(self, value, coefficient) -> float:
        if value.woe is not None:
            return coefficient * value.woe
        if value.log_odds is not None:
            return value.log_odds
        return -(value.points / self.factor)

    def points(self, value, coefficient) -> float:
        points = value.points if value.points is not None else -(self.factor * self.contribution(value, coefficient))
        return round_half_away(points) if self.per_bin else points

    def base_points(self) -> float:
        points = self.offset - self.factor * self.spec.intercept
        return round_half_away(points) if self.per_bin else points

    # -- one feature: (label, points, contribution) of a value

    def place(self, feature, x) -> tuple[str, float, float]:
        if isinstance(feature, NumericFeature):
            return self._numeric(feature, x)
        if isinstance(feature, CategoricalFeature):
            return self._categorical(feature, x)
        return self._linear(feature, x)

    def _bin_result(self, feature, value, label) -> tuple[str, float, float]:
        coefficient = feature.coefficient
        return label, self.points(value, coefficient), self.contribution(value, coefficient)

    @staticmethod
    def default_label(lower: float, upper: float, closed: str) -> str:
        """``[25, 35)`` / ``(25, 35]``: whole edges without a decimal point, open ends as ``inf``."""

        def edge(v: float) -> str:
            if math.isinf(v):
                return "inf" if v > 0 else "-inf"
            return str(int(v)) if v.is_integer() else repr(v)

        brackets = "[)" if closed == "lower" else "(]"
        return f"{brackets[0]}{edge(lower)}, {edge(upper)}{brackets[1]}"

    def numeric_label(self, feature: NumericFeature, b) -> str:
        return b.label or self.default_label(b.lower, b.upper, feature.closed)

    def _numeric(self, feature: NumericFeature, x) -> tuple[str, float, float]:
        by_label = {self.numeric_label(feature, b): b for b in feature.bins}
        by_label[feature.missing.label] = feature.missing
        lowest = min(feature.bins, key=lambda b: b.lower)
        highest = max(feature.bins, key=lambda b: b.upper)
        if is_null(x):
            label = feature.missing.label
        elif is_nan(x):
            label = feature.nan or feature.missing.label
        elif x == math.inf:
            label = feature.positive_infinity or self.numeric_label(feature, highest)
        elif x == -math.inf:
            label = feature.negative_infinity or self.numeric_label(feature, lowest)
        else:
            inside = [b for b in feature.bins if self._inside(x, b.lower, b.upper, feature.closed)]
            if len(inside) != 1:  # the spec's checks promise exactly one; say so loudly if not
                raise AssertionError(f"value {x!r} of {feature.name!r} falls in {len(inside)} bins")
            label = self.numeric_label(feature, inside[0])
        return self._bin_result(feature, by_label[label], label)

    @staticmethod
    def _inside(x, lower: float, upper: float, closed: str) -> bool:
        if isinstance(x, (int, Decimal)) and not isinstance(x, bool):
            # an exact value (whole number, DECIMAL) meets the edges as the spec writes them;
            # Python compares int and Decimal with these exactly, never through a float
            lower, upper = (Decimal(repr(e)) if math.isfinite(e) else e for e in (lower, upper))
        if closed == "lower":
            return lower <= x < upper
        return lower < x <= upper

    def _categorical(self, feature: CategoricalFeature, x) -> tuple[str, float, float]:
        if is_null(x):
            return self._bin_result(feature, feature.missing, feature.missing.label)
        for group in feature.groups:
            if any(_matches(category, x) for category in group.values):
                return self._bin_result(feature, group, group.label)
        return self._bin_result(feature, feature.other, feature.other.label)

    def linear_points(self, feature: LinearFeature, clipped: float) -> float:
        slope = feature.coefficient / feature.scale
        points = -(self.factor * slope) * (clipped - feature.center)
        return round_half_away(points) if self.per_bin else points

    def _linear(self, feature: LinearFeature, x) -> tuple[str, float, float]:
        if is_null(x) or is_nan(x):
            missing = feature.missing
            return missing.label, self.points(missing, None), self.contribution(missing, None)
        if x < feature.lower:
            label, clipped = "clipped_low", feature.lower
        elif x > feature.upper:
            label, clipped = "clipped_high", feature.upper
        else:
            label, clipped = "in_range", float(x)
        slope = feature.coefficient / feature.scale
        return label, self.linear_points(feature, clipped), slope * (clipped - feature.center)

    # -- reasons

    def max_points(self, feature) -> float:
        coefficient = getattr(feature, "coefficient", None)
        if isinstance(feature, NumericFeature):
            values = list(feature.bins)
        elif isinstance(feature, CategoricalFeature):
            values = list(feature.groups) + [feature.other]
        else:
            values = []
        candidates = [self.points(v, coefficient) for v in values + [feature.missing]]
        if isinstance(feature, LinearFeature):
            candidates += [self.linear_points(feature, feature.lower), self.linear_points(feature, feature.upper)]
        return max(candidates)

    def reference(self, statement) -> float:
        if statement.reference is not None:
            return statement.reference
        total = self.max_points(self.by_name[statement.features[0]])
        for name in statement.features[1:]:
            total = total + self.max_points(self.by_name[name])
        return total

    # -- a whole row

    def score_row(self, row) -> dict:
        """``row`` maps column name → value; returns the scored columns of README "Scored output"."""
        result: dict = {}
        points_of: dict[str, float] = {}
        score = self.base_points()
        eta = self.spec.intercept
        for feature in self.spec.features:
            label, points, contribution = self.place(feature, row[feature.column or feature.name])
            result[f"{feature.name}_bin"] = label
            result[f"{feature.name}_points"] = points
            points_of[feature.name] = points
            score = score + points
            eta = eta + contribution
        if self.on_total:
            score = round_half_away(score)
        result["score"] = score
        # the PD from the score when the spec says so (its default for a rounded score): the η
        # the score stands for, (offset − score) / factor
        pd_from = self.spec.scaling.pd_from or ("log_odds" if self.spec.scaling.rounding == "none" else "score")
        result["pd"] = logistic(eta if pd_from == "log_odds" else (self.offset - score) / self.factor)
        result["grade"] = self.grade(score)
        shortfalls = []
        for position, statement in enumerate(self.spec.reasons.statements):
            own = points_of[statement.features[0]]
            for name in statement.features[1:]:
                own = own + points_of[name]
            # ranked held to whole billionths of a point, rounded half up (0 below half a billionth)
            units = (self.reference(statement) - own) * 1e9
            held = units if units >= 2.0 ** 52 else (0.0 if units < 0.5 else float(math.floor(units + 0.5)))
            shortfalls.append((held, position, statement.code))
        ranked = sorted((s for s in shortfalls if s[0] > 0), key=lambda s: (-s[0], s[1]))
        for k in range(1, min(self.spec.reasons.count, len(shortfalls)) + 1):
            result[f"reason_{k}"] = ranked[k - 1][2] if k <= len(ranked) else None
        return result

    def grade(self, score: float) -> str:
        names = [g.name for g in self.spec.grades if g.lower <= score < g.upper]
        if len(names) != 1:
            raise AssertionError(f"score {score!r} falls in {len(names)} grades")
        return names[0]


def _matches(category, x) -> bool:
    """Text categories match text only; whole-number categories whole numbers only (numpy's too)."""
    if isinstance(category, str):
        return isinstance(x, str) and x == category
    return isinstance(x, numbers.Integral) and not isinstance(x, bool) and int(x) == category


def logistic(eta: float) -> float:
    """1 / (1 + e^(−η)) in double precision; e^(−η) past the double range is +inf, giving 0."""
    try:
        return 1.0 / (1.0 + math.exp(-eta))
    except OverflowError:
        return 0.0


def score_frame(spec: Spec, frame: pd.DataFrame) -> pd.DataFrame:
    """Score every row of ``frame``; the result keeps ``frame``'s index and holds Python objects."""
    scorer = ReferenceScorer(spec)
    columns = list(frame.columns)
    records = [scorer.score_row(dict(zip(columns, values))) for values in frame.itertuples(index=False, name=None)]
    return pd.DataFrame(records, index=frame.index, dtype=object)
