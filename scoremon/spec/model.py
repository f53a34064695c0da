"""The typed model of a spec: frozen pydantic classes, one per part of the YAML file.

This module says what each key holds (types, required or optional, defaults). Rules that
span several keys (bins cover the line, a category sits in one group, grades cover every
score) live in :mod:`scoremon.spec.checks`, which runs after these classes accept a file.

The semantics a reviewer needs, in one place:

* η (the linear predictor) is the log-odds of the event: η = intercept + Σ contributions.
  PD = 1 / (1 + e^(−η)).
* A bin's contribution to η is ``coefficient × woe``, or ``log_odds`` directly, or, for a
  bin given in ``points``, ``−points / factor``.
* factor = pdo / ln 2; offset = base_score − factor · ln(base_odds), odds being good:bad.
  score = offset − factor · η, written as base points plus one points value per feature.
* The reported PD is 1 / (1 + e^(−η)) from the exact η, or, with ``pd_from: score`` (the
  default when the score is rounded), from the η the score stands for, (offset − score) /
  factor, so that rows with one score carry one PD.
"""
from __future__ import annotations

import math
from datetime import date
from typing import Annotated, Any, Literal, Union

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, FiniteFloat, WithJsonSchema
from pydantic_core import PydanticCustomError

FEATURE_TYPES = ("numeric", "categorical", "linear")
LINEAR_LABELS = ("clipped_low", "in_range", "clipped_high")


def _text_from_number(value: Any) -> Any:
    """Let ``version: 2`` mean the text "2" (YAML reads it as a number)."""
    if isinstance(value, bool):
        raise PydanticCustomError("text_type", "expected text, got {value}", {"value": value})
    if isinstance(value, (int, float)):
        return str(value)
    return value


def _category_value(value: Any) -> Any:
    if isinstance(value, bool) or not isinstance(value, (str, int)):
        raise PydanticCustomError(
            "category_type",
            "category value {value!r} is neither text nor a whole number; quote it to make it text",
            {"value": value},
        )
    return value


def _edge(value: Any) -> Any:
    """Bin and grade edges: a number, or .inf / -.inf for an open end. NaN is refused."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise PydanticCustomError("edge_type", "expected a number (or .inf / -.inf), got {value!r}", {"value": value})
    if math.isnan(value):
        raise PydanticCustomError("edge_nan", "an edge cannot be .nan; use a number, .inf or -.inf", {})
    return float(value)


# Written as text or as a number in YAML (`version: 2`); always held as text.
Text = Annotated[str, BeforeValidator(_text_from_number),
                 WithJsonSchema({"anyOf": [{"type": "string"}, {"type": "number"}], "minLength": 1})]
CategoryValue = Annotated[Union[str, int], BeforeValidator(_category_value)]
Edge = Annotated[float, BeforeValidator(_edge)]


def interval_label(lower: float, upper: float, closed: str) -> str:
    """The label a numeric bin gets when the spec gives none, e.g. ``[25, 35)``."""

    def edge(value: float) -> str:
        if value == float("inf"):
            return "inf"
        if value == float("-inf"):
            return "-inf"
        return repr(int(value)) if value == int(value) else repr(value)

    left, right = ("[", ")") if closed == "lower" else ("(", "]")
    return f"{left}{edge(lower)}, {edge(upper)}{right}"


class Part(BaseModel):
    """Base of every spec part: immutable, and unknown keys are errors (typos are caught)."""

    # strict: `pdo: yes` or `pdo: "20"` is an error, not 1.0 or 20.0 (YAML already types values).
    # defer_build: each class's validator is built when first used, not at import; building the
    # Spec's builds its parts with it once, where building every class at import took a third of
    # `scoremon check` (measured on the demo spec).
    model_config = ConfigDict(frozen=True, extra="forbid", strict=True, defer_build=True)


class Identity(Part):
    """Who the model is, what it predicts and over which window outcomes mature."""

    name: str = Field(min_length=1)
    version: Text = Field(min_length=1)
    description: str = ""
    owner: str = Field(min_length=1)
    effective_date: date = Field(strict=False)  # a date, or its ISO text (specs built as data, JSON)
    intended_use: str = Field(min_length=1)
    event: str = Field(min_length=1, description="the event (target) definition; y = 1")
    performance_window_months: int = Field(ge=1, le=120)


class Scaling(Part):
    """How η becomes a score: base score at base odds (good:bad), points to double the odds."""

    base_score: FiniteFloat
    base_odds: FiniteFloat = Field(gt=0)
    pdo: FiniteFloat = Field(gt=0)
    rounding: Literal["none", "per_bin", "total"] = "none"
    pd_from: Literal["score", "log_odds"] | None = Field(
        default=None, description="which PD a row reports: from its score (the default for a rounded scorecard, so "
                                  "one score has one PD) or from the exact log-odds (the default without rounding)")

    @property
    def reported_pd(self) -> str:
        """``score`` or ``log_odds``: ``pd_from``, or its default for this rounding."""
        return self.pd_from or ("log_odds" if self.rounding == "none" else "score")

    @property
    def reported_pd_words(self) -> str:
        """The PD's source in words, as ``check``, ``diff`` and the reports say it."""
        if self.reported_pd == "log_odds":
            return "PD from the exact log-odds"
        return "PD from the score" if self.rounding == "none" else "PD from the rounded score"

    @property
    def factor(self) -> float:
        return self.pdo / math.log(2.0)

    @property
    def offset(self) -> float:
        return self.base_score - self.factor * math.log(self.base_odds)


class Value(Part):
    """What a bin adds to the model: exactly one of woe, log_odds or points."""

    woe: FiniteFloat | None = None
    log_odds: FiniteFloat | None = None
    points: FiniteFloat | None = None

    @property
    def value_kind(self) -> str | None:
        given = [k for k in ("woe", "log_odds", "points") if getattr(self, k) is not None]
        return given[0] if len(given) == 1 else None


class NumericBin(Value):
    """An interval of a numeric feature; which end is closed is the feature's ``closed``."""

    label: str | None = Field(default=None, min_length=1)
    lower: Edge
    upper: Edge


class CategoryGroup(Value):
    """A group of category values that share one bin."""

    label: str = Field(min_length=1)
    values: list[CategoryValue] = Field(min_length=1)


class OtherGroup(Value):
    """The catch-all bin: listed values plus every value no group lists (unseen ones)."""

    label: str = Field(default="other", min_length=1)
    values: list[CategoryValue] = Field(default_factory=list)


class MissingBin(Value):
    """Where NULL goes (and NaN, unless the feature routes NaN elsewhere)."""

    label: str = Field(default="missing", min_length=1)


class _Feature(Part):
    """What every kind of feature shares."""

    @property
    def source_column(self) -> str:
        """The input column the feature reads: its ``column``, or else its ``name``."""
        return self.column or self.name


class NumericFeature(_Feature):
    """A numeric characteristic cut into half-open intervals that cover the whole line."""

    name: str
    type: Literal["numeric"]
    column: str | None = None
    description: str = ""
    closed: Literal["lower", "upper"] = Field(
        default="lower", description="lower: bins are [lower, upper); upper: bins are (lower, upper]"
    )
    coefficient: FiniteFloat | None = None
    bins: list[NumericBin] = Field(min_length=1)
    missing: MissingBin
    nan: str | None = Field(default=None, description="label of the bin NaN goes to; default: the missing bin")
    positive_infinity: str | None = Field(default=None, description="label of the bin +inf goes to; default: the top bin")
    negative_infinity: str | None = Field(default=None, description="label of the bin -inf goes to; default: the bottom bin")

    def bin_label(self, bin_: NumericBin) -> str:
        """A bin's label: as the spec gives it, or else its interval (e.g. ``[25, 35)``)."""
        return bin_.label or interval_label(bin_.lower, bin_.upper, self.closed)


class CategoricalFeature(_Feature):
    """A categorical characteristic: values in groups, a declared catch-all, a missing bin."""

    name: str
    type: Literal["categorical"]
    column: str | None = None
    description: str = ""
    coefficient: FiniteFloat | None = None
    groups: list[CategoryGroup] = Field(min_length=1)
    other: OtherGroup
    missing: MissingBin

    @property
    def listed_values(self) -> list[CategoryValue]:
        """Every value the spec names: its groups' (in order) and then its catch-all's."""
        return [v for g in self.groups for v in g.values] + list(self.other.values)


class LinearFeature(_Feature):
    """A numeric characteristic entering η as coefficient × (clip(x) − center) / scale.

    NaN and NULL take the missing bin; +inf and −inf are clipped like any value past the
    bounds. Rows are labelled clipped_low, in_range or clipped_high (or the missing label).
    """

    name: str
    type: Literal["linear"]
    column: str | None = None
    description: str = ""
    coefficient: FiniteFloat
    lower: FiniteFloat
    upper: FiniteFloat
    center: FiniteFloat = 0.0
    scale: FiniteFloat = 1.0
    missing: MissingBin


Feature = Annotated[Union[NumericFeature, CategoricalFeature, LinearFeature], Field(discriminator="type")]


class Grade(Part):
    """A score band [lower, upper) with a name."""

    name: str = Field(min_length=1)
    lower: Edge
    upper: Edge


class ReasonStatement(Part):
    """A reason a score is low, owned by one feature or a group of features."""

    code: Text = Field(min_length=1)
    text: str = Field(min_length=1)
    features: list[str] = Field(min_length=1)
    reference: FiniteFloat | None = Field(
        default=None, description="points the features are compared with; default: the sum of their maximum points"
    )


class Reasons(Part):
    """How many reasons to return per row and the statements to choose them from."""

    count: int = Field(default=3, ge=0, le=10)
    statements: list[ReasonStatement] = Field(default_factory=list)


class BaselineBand(Part):
    """The development share of one score band."""

    lower: Edge
    upper: Edge
    share: FiniteFloat = Field(ge=0, le=1)


class Baseline(Part):
    """The development distribution, frozen so monitoring compares with what was approved."""

    computed_from: str = ""
    computed_at: str = ""
    rows: int = Field(ge=0)
    rows_per_month: FiniteFloat | None = Field(default=None, ge=0, description="mean rows per month of development")
    rows_out_of_range: int | None = Field(
        default=None, ge=0, description="development rows left out because their month is out of range (README: "
                                        "months out of range)")
    event_rate: FiniteFloat | None = None
    auc: FiniteFloat | None = None
    ks: FiniteFloat | None = None
    mean_score: FiniteFloat | None = None
    score_bands: list[BaselineBand] = Field(default_factory=list)
    feature_shares: dict[str, dict[str, FiniteFloat]] = Field(default_factory=dict)
    mean_points: dict[str, FiniteFloat] = Field(default_factory=dict, description="mean points per feature")
    unseen_rate: dict[str, FiniteFloat] = Field(
        default_factory=dict, description="share of rows per categorical feature whose value no group lists")


SettingValue = Union[bool, int, float, str, list[str], None]


class Development(Part):
    """How the model was fitted (written by `scoremon fit`): documentation for a validator.

    Like the baseline it is not part of the model: two specs that score alike have one
    fingerprint whatever their development records say, so scored rows stay linked to the
    model when the record is corrected or completed.
    """

    table: str = Field(min_length=1)
    engine: str = Field(min_length=1, description="the engine's dialect name")
    rows: int = Field(ge=0)
    events: int = Field(ge=0)
    months: list[str] | None = Field(default=None, description="first and last month of the development rows")
    binning_fingerprint: str = Field(default="", description="fingerprint of the binning file the fit read")
    settings: dict[str, SettingValue] = Field(default_factory=dict, description="every setting of the fit")
    chosen_lambda: FiniteFloat | None = Field(default=None, ge=0, description="the penalty weight λ chosen")
    fitted_at: str = ""
    scoremon_version: str = ""


class Spec(Part):
    """One version of a scoring model, as written in its YAML file."""

    model: Identity
    intercept: FiniteFloat
    scaling: Scaling
    features: list[Feature] = Field(min_length=1)
    grades: list[Grade] = Field(min_length=1)
    reasons: Reasons = Field(default_factory=Reasons)
    baseline: Baseline | None = None
    development: Development | None = None
