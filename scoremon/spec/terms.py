"""What each bin of a validated spec adds to η and to the score.

Every consumer (compiler, diff, monitor, tests) reads bins through these terms so that the
arithmetic is written once. Conventions (they fix every floating-point operation, so the SQL
and any reference computation give the same bits):

* contribution to η: ``coefficient * woe``, ``log_odds``, or ``-(points / factor)``;
* points: ``-(factor * contribution)``, or the given ``points`` as written;
* with ``rounding: per_bin`` points are rounded half away from zero, holding binary noise just
  below a half as the half (:func:`round_half_away`);
* base points = ``offset - factor * intercept`` (rounded too under ``per_bin``);
* a linear feature contributes ``slope * (clip(x) - center)`` with ``slope = coefficient / scale``
  and scores ``points_slope * (clip(x) - center)`` with ``points_slope = -(factor * slope)``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from .model import CategoricalFeature, LinearFeature, NumericFeature, ReasonStatement, Spec, Value

# Rounding is half away from zero with a hold: a value whose fraction falls short of the half
# by at most HOLD_RELATIVE · max(|value|, HOLD_FLOOR_SIZE) rounds as the half it stands for.
# Binary noise grows with a value's size: a sum near 520 is off by units of 2**-43 in its last
# place, one near 4,500 by units of 2**-40, so a fixed hold (12 decimals) missed noise beyond a
# few units at 500 and any noise above about 4,500. 2**-48 · |value| is between 16 and 32 units
# in the last place of the value; below 128 the hold stays 2**-41 ≈ 4.5e-13 (the noise of sums
# whose terms are larger than their result).
HOLD_RELATIVE = 2.0 ** -48
HOLD_FLOOR_SIZE = 128.0
WHOLE_FROM = 2.0 ** 52  # every double from here on is whole


def round_half_away(value: float) -> float:
    """Round to a whole number, half away from zero, with the hold above. This is the rule's
    definition, in exact arithmetic (:class:`~fractions.Fraction`); the SQL computes the same in
    doubles (compiler.round_half_away_sql). Zero comes back as +0.0.

    >>> round_half_away(519.4999999999994), round_half_away(519.4999999999), round_half_away(-2.5)
    (520.0, 519.0, -3.0)
    """
    size = abs(value)
    if not size < WHOLE_FROM:
        return value + 0.0
    whole = math.floor(size)
    hold = Fraction(max(size, HOLD_FLOOR_SIZE)) * Fraction(HOLD_RELATIVE)
    rounded = whole + 1 if Fraction(1, 2) - (Fraction(size) - whole) <= hold else whole
    return float(rounded if value > 0 else -rounded) + 0.0


# Reason shortfalls are compared in whole billionths of a point, rounded half up: shortfalls
# equal in exact arithmetic but apart in a double's last bits tie, and the tie goes to the
# statement listed first. Below 2**52 billionths ``v + 0.5`` is exact, so FLOOR(v + 0.5) is the
# rounding on every engine; from 2**52 on every double is whole already. A shortfall below half
# a billionth holds as 0 and gives no reason.
SHORTFALL_UNITS = 1e9


@dataclass(frozen=True)
class BinTerm:
    """One bin: its label, what it adds to η and what it adds to the score."""

    label: str
    log_odds: float
    points: float


@dataclass(frozen=True)
class FeatureTerms:
    """A feature's bins in a fixed order, and where its special values go.

    ``bins`` lists numeric intervals (by lower edge) or category groups (by label), then the
    catch-all (categorical only), then the missing bin. For a linear feature it lists only
    the missing bin; the row-dependent part is ``slope`` / ``points_slope``.
    """

    name: str
    column: str
    bins: tuple[BinTerm, ...]
    max_points: float

    def index(self, label: str) -> int:
        return [b.label for b in self.bins].index(label)


def contribution(value: Value, coefficient: float | None, factor: float) -> float:
    """What one bin adds to η."""
    if value.woe is not None:
        return coefficient * value.woe
    if value.log_odds is not None:
        return value.log_odds
    return -(value.points / factor)


def bin_points(value: Value, coefficient: float | None, factor: float, rounding: str) -> float:
    """What one bin adds to the score."""
    points = value.points if value.points is not None else -(factor * contribution(value, coefficient, factor))
    return round_half_away(points) if rounding == "per_bin" else points


def base_points(spec: Spec) -> float:
    """The score of a row whose every feature adds nothing: offset − factor · intercept."""
    points = spec.scaling.offset - spec.scaling.factor * spec.intercept
    return round_half_away(points) if spec.scaling.rounding == "per_bin" else points


def numeric_bins_in_order(feature: NumericFeature):
    return sorted(feature.bins, key=lambda b: b.lower)


def feature_terms(spec: Spec, feature) -> FeatureTerms:
    """The :class:`FeatureTerms` of one feature of a validated spec."""
    factor, rounding = spec.scaling.factor, spec.scaling.rounding

    def term(label: str, value: Value, coefficient: float | None) -> BinTerm:
        return BinTerm(label, contribution(value, coefficient, factor), bin_points(value, coefficient, factor, rounding))

    coefficient = getattr(feature, "coefficient", None)
    if isinstance(feature, NumericFeature):
        bins = [term(feature.bin_label(b), b, coefficient)
                for b in numeric_bins_in_order(feature)]
    elif isinstance(feature, CategoricalFeature):
        bins = [term(g.label, g, coefficient) for g in sorted(feature.groups, key=lambda g: g.label)]
        bins.append(term(feature.other.label, feature.other, coefficient))
    else:
        bins = []
    bins.append(term(feature.missing.label, feature.missing, coefficient))
    candidates = [b.points for b in bins]
    if isinstance(feature, LinearFeature):
        candidates += [linear_points(spec, feature, feature.lower), linear_points(spec, feature, feature.upper)]
    return FeatureTerms(feature.name, feature.source_column, tuple(bins), max(candidates))


def linear_slope(feature: LinearFeature) -> float:
    return feature.coefficient / feature.scale


def linear_points_slope(spec: Spec, feature: LinearFeature) -> float:
    return -(spec.scaling.factor * linear_slope(feature))


def linear_points(spec: Spec, feature: LinearFeature, clipped: float) -> float:
    """Points of a linear feature at an already-clipped value (rounded under per_bin)."""
    points = linear_points_slope(spec, feature) * (clipped - feature.center)
    return round_half_away(points) if spec.scaling.rounding == "per_bin" else points


def special_routes(feature: NumericFeature) -> dict[str, str]:
    """Bin labels that NaN, +inf and −inf go to, with the documented defaults filled in."""
    ordered = numeric_bins_in_order(feature)
    return {
        "nan": feature.nan or feature.missing.label,
        "positive_infinity": feature.positive_infinity or feature.bin_label(ordered[-1]),
        "negative_infinity": feature.negative_infinity or feature.bin_label(ordered[0]),
    }


def statement_reference(statement: ReasonStatement, max_points: dict[str, float]) -> float:
    """The points a reason statement's features are compared with: its ``reference``, or else
    the sum of its features' maximum points (``max_points``: feature name → maximum points),
    added in the statement's order."""
    if statement.reference is not None:
        return statement.reference
    reference = max_points[statement.features[0]]
    for name in statement.features[1:]:
        reference = reference + max_points[name]
    return reference
