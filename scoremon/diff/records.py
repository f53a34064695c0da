"""The typed records a diff produces: one :class:`Change` per semantic difference, the
:class:`ScoreMap` that says what the changes do to every score, and :class:`ModelDiff`, the
whole comparison of two model versions.

Records hold values and one plain-words ``summary`` each, so that the terminal, Markdown and
JSON renderings say the same thing without computing anything.

How a change can affect a score (:class:`Effect`), from least to most:

``none``          no score or PD can move: identity, texts, labels, grades, reasons, or a
                  restatement that leaves every contribution as it was;
``scaling_only``  only the intercept or the scaling moved: every score moves by one rule
                  (see :class:`ScoreMap`), and the order of rows by score is kept (rounding
                  aside);
``one_feature``   one feature's contribution changed for some inputs;
``structure``     features added or removed, several features changed together, or a new
                  PDO that stretches features given in points against the others.

Grades and reasons do not move a score but can change a decision; each record also lists
the ``outputs`` it can alter (``score``, ``pd``, ``grade``, ``reasons``, ``bin_labels``,
``identity``, ``columns``) so that a validator can apply their own policy.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum
from typing import Any

from ..version import VERSION
from .impact import Impact


class Effect(str, Enum):
    """How a change can affect a score; members compare by severity."""

    NONE = "none"
    SCALING_ONLY = "scaling_only"
    ONE_FEATURE = "one_feature"
    STRUCTURE = "structure"

    @property
    def rank(self) -> int:
        return list(Effect).index(self)

    @property
    def words(self) -> str:
        return self.value.replace("_", " ")


class ChangeKind(str, Enum):
    """Every kind of difference the diff reports; the value is the JSON word."""

    IDENTITY_CHANGED = "identity_changed"
    INTERCEPT_CHANGED = "intercept_changed"
    SCALING_CHANGED = "scaling_changed"
    FEATURE_ADDED = "feature_added"
    FEATURE_REMOVED = "feature_removed"
    FEATURE_RENAMED = "feature_renamed"
    FEATURE_ORDER_CHANGED = "feature_order_changed"
    FEATURE_TYPE_CHANGED = "feature_type_changed"
    FEATURE_COLUMN_CHANGED = "feature_column_changed"
    FEATURE_DESCRIPTION_CHANGED = "feature_description_changed"
    COEFFICIENT_CHANGED = "coefficient_changed"
    BINS_SPLIT = "bins_split"
    BINS_MERGED = "bins_merged"
    EDGES_MOVED = "edges_moved"
    CLOSED_SIDE_CHANGED = "closed_side_changed"
    SPECIAL_ROUTE_CHANGED = "special_route_changed"
    CATEGORY_MOVED = "category_moved"
    GROUP_ADDED = "group_added"
    GROUP_REMOVED = "group_removed"
    CATCH_ALL_LISTING_CHANGED = "catch_all_listing_changed"
    BIN_VALUE_CHANGED = "bin_value_changed"
    BIN_RELABELLED = "bin_relabelled"
    CLIP_CHANGED = "clip_changed"
    LINEAR_TERM_CHANGED = "linear_term_changed"
    VALUES_RESTATED = "values_restated"
    GRADE_ADDED = "grade_added"
    GRADE_REMOVED = "grade_removed"
    GRADE_RENAMED = "grade_renamed"
    GRADE_BOUNDS_CHANGED = "grade_bounds_changed"
    REASON_COUNT_CHANGED = "reason_count_changed"
    REASON_ADDED = "reason_added"
    REASON_REMOVED = "reason_removed"
    REASON_CODE_RENAMED = "reason_code_renamed"
    REASON_FEATURES_CHANGED = "reason_features_changed"
    REASON_TEXT_CHANGED = "reason_text_changed"
    REASON_REFERENCE_CHANGED = "reason_reference_changed"
    REASON_ORDER_CHANGED = "reason_order_changed"
    OTHER = "other"


@dataclass(frozen=True)
class Change:
    """One semantic difference between two model versions.

    ``subject`` names what changed (``"feature age"``, ``"scaling.pdo"``, ``"grade B"``);
    ``feature`` is the feature's name when the change belongs to one feature. ``old`` and
    ``new`` are the values before and after (plain data), ``delta`` the numeric difference
    where one makes sense (for a bin value: new points − old points).
    """

    kind: ChangeKind
    subject: str
    summary: str
    effect: Effect
    outputs: tuple[str, ...]
    feature: str | None = None
    old: Any = None
    new: Any = None
    delta: float | None = None


@dataclass(frozen=True)
class ScoreMap:
    """What the changes do to every score, when one rule covers every row.

    ``kind`` is ``identical`` (no score moves), ``constant_shift`` (every score moves by
    ``shift`` points) or ``linear`` (new score = ``intercept`` + ``slope`` × old score).
    ``is_exact`` is false where rounding makes the rule hold only to within a point.
    ``pd_unchanged`` says whether every row keeps its PD.
    """

    kind: str
    shift: float | None
    slope: float
    intercept: float
    is_exact: bool
    pd_unchanged: bool
    summary: str


@dataclass(frozen=True)
class VersionInfo:
    """Which model version one side of a diff is."""

    name: str
    version: str
    fingerprint: str
    source: str = ""


@dataclass(frozen=True)
class ModelDiff:
    """The structural comparison of two model versions (see :func:`scoremon.diff.diff_models`).

    ``effect`` is the overall class: the most severe change's, raised to ``structure`` when
    changes that each touch one feature touch more than one. ``score_map`` is set when one
    rule describes the move of every score. ``notes`` carry facts that are not changes of
    the model (for example a different development baseline).
    """

    old: VersionInfo
    new: VersionInfo
    changes: tuple[Change, ...]
    effect: Effect
    score_map: ScoreMap | None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def is_equivalent(self) -> bool:
        """True when nothing differs: the two versions are the same model."""
        return not self.changes

    @property
    def changed_features(self) -> tuple[str, ...]:
        seen: dict[str, None] = {}
        for change in self.changes:
            if change.feature is not None and change.effect is not Effect.NONE:
                seen.setdefault(change.feature)
        return tuple(seen)


@dataclass(frozen=True)
class DiffReport:
    """A diff as it goes into a report: the structural comparison, the impact on a
    population when one was given, and when the run happened (ISO 8601, UTC)."""

    diff: ModelDiff
    impact: Impact | None
    run_at: str
    scoremon_version: str = VERSION
