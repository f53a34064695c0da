"""The result records of a monitoring run: plain frozen dataclasses, rendered by ``report/``.

Field names are the words used everywhere else: the JSON keys, the history's metric names and
the SQL aliases (``missing_rate`` is ``missing_rate`` all the way through). Shares and rates
are fractions (0.05 = 5 %); a figure that cannot be computed is ``None``; a status is
``"ok"``, ``"watch"``, ``"alert"`` or ``None`` (no figure, or an immature month).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date

from .months import MONTHS_IN_RANGE
from ..version import VERSION

MATURE, IMMATURE = "mature", "immature"


@dataclass(frozen=True)
class BinShare:
    """One bin (or score band): its share in the baseline and in the month, and its points."""

    label: str
    expected: float | None
    actual: float | None
    points: float | None = None


@dataclass(frozen=True)
class CharacteristicStability:
    """One characteristic in one month: PSI over its bins and its points shift."""

    feature: str
    psi: float | None
    psi_critical_value: float | None  # at the watch confidence level
    points_shift: float | None  # Σ (actual − expected)·points; for a linear term, the change in mean points
    status: str | None
    bins: tuple[BinShare, ...] = ()


@dataclass(frozen=True)
class FeatureQuality:
    """One feature in one month: missing rate, unseen-category rate, catch-all share, each with its change."""

    feature: str
    missing_rate: float | None
    missing_rate_change: float | None
    missing_rate_status: str | None
    unseen_rate: float | None = None
    unseen_rate_change: float | None = None
    unseen_rate_status: str | None = None
    catch_all_share: float | None = None
    catch_all_share_change: float | None = None
    catch_all_share_status: str | None = None
    status: str | None = None


@dataclass(frozen=True)
class GradeCalibration:
    """One grade in one mature month."""

    grade: str
    rows: int
    events: int
    mean_pd: float | None
    event_rate: float | None
    jeffreys_p: float | None
    binomial_p: float | None
    status: str | None


@dataclass(frozen=True)
class Calibration:
    """Back-test of one mature month: the month as a whole, then each grade."""

    rows: int
    events: int
    mean_pd: float | None
    event_rate: float | None
    jeffreys_p: float | None
    binomial_p: float | None
    chi_square: float | None
    chi_square_df: int | None
    chi_square_p: float | None
    chi_square_status: str | None
    spiegelhalter_z: float | None
    spiegelhalter_p: float | None
    brier: float | None
    rows_without_outcome: int
    status: str | None
    grades: tuple[GradeCalibration, ...] = ()


@dataclass(frozen=True)
class Discrimination:
    """AUC (with a DeLong 95 % interval), Gini and KS of one mature month, and the change in AUC."""

    events: int
    non_events: int
    auc: float | None
    auc_lower: float | None
    auc_upper: float | None
    gini: float | None
    ks: float | None
    auc_change: float | None  # month − baseline
    status: str | None


@dataclass(frozen=True)
class MonthResult:
    """Everything measured for one month."""

    month: str
    rows: int
    maturity: str
    expected_rows: float | None  # what the month's rows are judged against (see MonitorReport.volume_rule)
    volume_change: float | None  # rows / expected rows − 1
    volume_status: str | None
    score_psi: float | None
    score_psi_critical_value: float | None  # at the watch confidence level
    score_psi_status: str | None
    mean_score: float | None
    mean_score_shift: float | None  # month − baseline
    score_bands: tuple[BinShare, ...]
    characteristics: tuple[CharacteristicStability, ...]
    quality: tuple[FeatureQuality, ...]
    calibration: Calibration | None
    discrimination: Discrimination | None
    stability_status: str | None
    data_quality_status: str | None
    calibration_status: str | None
    discrimination_status: str | None
    status: str | None

    @property
    def worst_characteristic(self) -> CharacteristicStability | None:
        """The characteristic with the highest PSI this month."""
        measured = [c for c in self.characteristics if c.psi is not None]
        return max(measured, key=lambda c: c.psi, default=None)


@dataclass(frozen=True)
class Drift:
    """A characteristic that drifts, over the whole run: the month it is worst and the latest figures."""

    feature: str
    worst_month: str
    worst_psi: float
    status: str | None
    latest_psi: float | None
    latest_points_shift: float | None
    months_flagged: int


@dataclass(frozen=True)
class MonitorReport:
    """A monitoring run: who, against what, every month, the ranked drifts, and the overall status."""

    run_id: str
    run_at: str
    model_name: str
    model_version: str
    model_fingerprint: str
    as_of: date
    performance_window_months: int
    source: str
    baseline_source: str
    baseline_rows: int
    expected_monthly_rows: float | None
    thresholds: dict
    months: tuple[MonthResult, ...]
    drifts: tuple[Drift, ...]
    notes: tuple[str, ...] = field(default_factory=tuple)
    status: str | None = None
    volume_rule: str = ""  # what each month's volume is judged against, in words
    rows: int = 0  # rows of the book in the reported months
    scoremon_version: str = VERSION
    calibration_test: str = "one-sided"  # or "two-sided": the Jeffreys and binomial p-values
    rows_out_of_range: int = 0  # rows in months before the range (scoremon.monitor.months), left out
    months_in_range: int = MONTHS_IN_RANGE  # the range's length in months (--months-in-range)

    @property
    def has_alert(self) -> bool:
        return self.status == "alert"

    @property
    def latest_month_with_rows(self) -> MonthResult:
        """The latest month that has rows (months after it, up to the as-of month, are empty)."""
        return next((m for m in reversed(self.months) if m.rows), self.months[-1])

    @property
    def latest_mature_month(self) -> MonthResult | None:
        mature = [m for m in self.months if m.maturity == MATURE and m.calibration is not None]
        return mature[-1] if mature else None
