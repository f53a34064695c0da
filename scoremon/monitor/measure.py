"""Measuring a book month by month: run the grouped passes, compute the statistics, set statuses.

:func:`read_months` runs the month pass (volume, score and points sums, unseen values) and
decides which months are reported: every month in range (:mod:`scoremon.monitor.months`) from
the first that has rows to the as-of month, a month without rows in between or after the last
month with rows included (its volume is then zero, and it is on alert); rows out of range are
counted, not reported as months.
:func:`measure_book` runs the other three passes once each — bins and score bands over every
reported month, calibration and discrimination over the mature ones — and turns their small
result tables into a :class:`~scoremon.monitor.records.MonitorReport`.

Statuses (thresholds in :mod:`scoremon.monitor.thresholds`):

* a PSI (score or characteristic) is ``watch`` when it reaches the watch level *and* exceeds
  the sample-size-aware critical value at the watch confidence; ``alert`` likewise with the
  alert levels. A shift must be both material and more than sampling would produce.
* volume: its drop (1 − rows / expected rows) and its rise (rows / expected rows − 1), each with
  its own levels. The expected rows are, by default, the median rows of the book's own
  previous :data:`TRAILING_MONTHS` months (reported months, empty ones counting 0; the first
  month has none and no volume figure); or a monthly count the user gives; or, when asked,
  the development rows per month. A month without rows is on alert whatever it is judged against;
* missing rate, unseen-category rate, catch-all share: |month − baseline|, and, as for PSI,
  only when the change also exceeds what sampling produces at the ``psi_confidence`` levels
  (z·√(r(1−r)(1/M + 1/N)), r the baseline rate);
* calibration of a month: the traffic light of its Jeffreys p-value (the month as one pool,
  at its mean PD; ECB 2019 §2.5; one-sided by default, so a model that over-estimates reads
  ok, or two-sided when asked), raised to ``alert`` when the grade-level chi-square is at
  alert. The chi-square and each grade's Jeffreys test also get their own traffic lights,
  shown by grade: with a test per grade every month, a yellow light somewhere is routine and
  belongs to the grade table, not to the month's headline;
* discrimination: the AUC's drop below the baseline AUC, when the drop also exceeds z times
  the month's DeLong standard error at the ``psi_confidence`` levels.

A month's status is the worst of its families; the run's is the worst of its months.
"""
from __future__ import annotations

import uuid
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import date, datetime, timezone
from statistics import median
from typing import Any, Iterator, Sequence

from sqlglot import exp

from ..errors import InputError
from ..spec.model import Baseline, CategoricalFeature, LinearFeature, Spec
from ..trees import identifier
from . import queries
from .baseline import band_edges, feature_bins
from .months import MONTHS_IN_RANGE, Month, calendar_between, is_mature, sort_months
from .passes import BinCounts, GradeSums, bin_counts, grade_sums, histogram_sums, month_sums
from .queries import MonitoredRows
from .records import (
    IMMATURE,
    MATURE,
    BinShare,
    Calibration,
    CharacteristicStability,
    Discrimination,
    Drift,
    FeatureQuality,
    GradeCalibration,
    MonitorReport,
    MonthResult,
)
from .statistics import (
    HistogramSums,
    binomial_p,
    brier,
    discrimination,
    grade_chi_square,
    jeffreys_p,
    points_shift,
    psi,
    psi_critical_value,
    rate_change_critical_value,
    shares_with_empty_bin_rule,
    spiegelhalter,
    z_value,
)
from .thresholds import ALERT, OK, STATUS_ORDER, WATCH, Limit, Thresholds, worst

TRAILING_MONTHS = 6  # the book's own earlier months a month's volume is judged against
TRAILING, DEVELOPMENT = "trailing", "development"


@contextmanager
def monitored_relation(engine, rows: MonitoredRows) -> Iterator[exp.Expression]:
    """The relation the passes read: the monitored rows as a subquery over a scored table, or,
    when rows are scored on the fly, a temporary table holding them, so that the scoring runs
    once and not once per pass. The temporary table is dropped on the way out."""
    if not rows.scored_on_the_fly:
        yield exp.Subquery(this=rows.select.copy(), alias=exp.TableAlias(this=identifier("monitored")))
        return
    name = f"scoremon_monitored_{uuid.uuid4().hex[:12]}"
    engine.execute(queries.temporary_table(name, rows.select), "scoring the monitored rows into a temporary table")
    try:
        yield exp.Table(this=identifier(name))
    finally:
        engine.execute(queries.drop_table(name), "dropping the temporary table of monitored rows")


@dataclass(frozen=True)
class MonthRow:
    """One month as the month pass returned it (``value`` is the month column's own value)."""

    month: Month
    value: Any
    rows: int
    score_sum: float
    points_sums: tuple[float, ...]
    unseen_rows: dict[str, int]
    outcome_rows: int


@dataclass(frozen=True)
class BookMonths:
    """The months a run reports, oldest first, and what was left out."""

    months: tuple[MonthRow, ...]
    notes: tuple[str, ...] = ()
    rows_out_of_range: int = 0  # rows of months before the range (see scoremon.monitor.months)
    months_in_range: int = MONTHS_IN_RANGE  # the range's length

    def values_between(self, first: Month, last: Month) -> list:
        return [m.value for m in self.months if first <= m.month <= last and m.rows > 0]


def read_months(engine, spec: Spec, rows: MonitoredRows, relation: exp.Expression, as_of: date,
                month_column: str, months_in_range: int = MONTHS_IN_RANGE) -> BookMonths:
    """Run the month pass and decide the reported months (see the module docstring): those of
    the ``months_in_range`` months ending with the as-of month that the book has, and every
    month between them.

    Raises :class:`InputError` when the outcome holds values other than 0, 1 and NULL, when the
    month column holds something that is not a month, or when no month is on or before ``as_of``.
    """
    result = month_sums(engine, spec, rows, relation, None, "counting rows per month")
    invalid = sum(r.invalid_outcomes for r in result)
    if invalid:
        raise InputError(f"the outcome column holds {invalid:,} values that are neither 1, 0 nor NULL; "
                         "fix the outcome column (1 = event, 0 = no event, NULL = not known yet)")
    features = len(spec.features)
    sorted_months = sort_months(result, month_column, as_of, months_in_range)
    found: dict[Month, MonthRow] = {}
    for month, r in sorted_months.kept.items():
        found[month] = MonthRow(month, r.value, r.rows, r.score_sum, r.points_sums, r.unseen_rows, r.outcome_rows)
    if not found:
        raise InputError(f"no rows have a month on or before the as-of date {as_of} and in range (the "
                         f"{months_in_range} months ending then); check --as-of, --month-column and "
                         "--months-in-range")
    ordered = sorted(found)
    months = []
    for month in calendar_between(ordered[0], Month(as_of.year, as_of.month)):
        months.append(found.get(month) or MonthRow(month, None, 0, 0.0, (0.0,) * features, {}, 0))
    return BookMonths(tuple(months), tuple(sorted_months.notes(as_of)), sorted_months.rows_out_of_range,
                      months_in_range)


def _material_and_real(value: float | None, limit: Limit, critical_watch: float | None,
                       critical_alert: float | None) -> str | None:
    """``watch`` / ``alert`` only for a value at the level *and* beyond its sampling critical value."""
    if value is None:
        return None
    if value >= limit.alert and (critical_alert is None or value > critical_alert):
        return ALERT
    if value >= limit.watch and (critical_watch is None or value > critical_watch):
        return WATCH
    return OK


@dataclass(frozen=True)
class _Shift:
    psi: float | None
    critical_watch: float | None
    critical_alert: float | None


def _shift(actual_rows: Sequence[float], expected_shares: Sequence[float], baseline_rows: int,
           thresholds: Thresholds) -> _Shift:
    """PSI of a month's rows per bin against baseline shares, with the empty-bin rule.

    Bins empty on both sides carry no information and are left out before the rule applies.
    """
    pairs = [(a, e * baseline_rows) for a, e in zip(actual_rows, expected_shares) if a > 0 or e > 0]
    if len(pairs) < 2 or baseline_rows <= 0:
        return _Shift(None, None, None)
    actual = shares_with_empty_bin_rule([a for a, _ in pairs])
    expected = shares_with_empty_bin_rule([e for _, e in pairs])
    if actual is None or expected is None:
        return _Shift(None, None, None)
    rows = sum(a for a, _ in pairs)
    confidence = thresholds.psi_confidence
    return _Shift(psi(actual, expected),
                  psi_critical_value(len(pairs), baseline_rows, rows, confidence.watch),
                  psi_critical_value(len(pairs), baseline_rows, rows, confidence.alert))


def _ratio(numerator: float, denominator: float) -> float | None:
    return numerator / denominator if denominator else None


def _change(actual: float | None, expected: float | None) -> float | None:
    return None if actual is None or expected is None else actual - expected


@dataclass
class _Passes:
    """The bins, calibration and discrimination results, keyed by month."""

    bins: dict[Month, BinCounts] = field(default_factory=dict)
    grades: dict[Month, dict[str, GradeSums]] = field(default_factory=dict)
    histograms: dict[Month, HistogramSums] = field(default_factory=dict)


def measure_book(
    engine,
    spec: Spec,
    rows: MonitoredRows,
    relation: exp.Expression,
    book: BookMonths,
    *,
    as_of: date,
    month_column: str,
    baseline: Baseline,
    baseline_source: str,
    thresholds: Thresholds,
    source: str,
    notes: Sequence[str] = (),
    fingerprint: str,
    expected_rows: str | float = TRAILING,
    two_sided: bool = False,
) -> MonitorReport:
    """Every figure for every reported month of ``book``, with statuses (see the module docstring).

    ``expected_rows`` is what a month's volume is judged against: ``"trailing"`` (the default,
    the book's own earlier months), ``"development"`` (the baseline's rows per month) or a
    monthly count. ``two_sided`` makes the Jeffreys and binomial tests two-sided.
    """
    notes = list(notes) + list(book.notes)
    window = spec.model.performance_window_months
    edges = band_edges(baseline.score_bands)
    with_rows = [m for m in book.months if m.rows > 0]
    mature = [m for m in with_rows if rows.has_outcome and is_mature(m.month, window, as_of)]
    passes = _Passes()

    by_value = {m.value: m.month for m in with_rows}
    counted = bin_counts(engine, spec, relation, edges, True, queries.months_in([m.value for m in with_rows]),
                         "counting rows per month, score band and bin")
    for value, counts in counted.items():
        if value in by_value:
            passes.bins[by_value[value]] = counts

    if mature:
        where = queries.months_in([m.value for m in mature])
        grades = grade_sums(engine, relation, where, "back-testing calibration per month and grade")
        passes.grades = {by_value[value]: found for value, found in grades.items() if value in by_value}
        histograms = histogram_sums(engine, relation, where, True, "measuring discrimination per month")
        passes.histograms = {by_value[value]: found for value, found in histograms.items() if value in by_value}

    expected, volume_rule = _expected_rows(book, baseline, expected_rows, with_rows)
    if expected_rows == DEVELOPMENT and baseline.rows_per_month is None:
        notes.append(f"the baseline has no rows per month; volume is compared with this run's median month "
                     f"({expected[0]:,.0f} rows)")
    missing_baseline = [f.name for f in spec.features if f.name not in baseline.feature_shares]
    if missing_baseline:
        notes.append(f"the baseline has no bin shares for {', '.join(missing_baseline)}: no PSI for them")
    if not rows.has_outcome:
        notes.append("no outcome column was given: no calibration or discrimination")
    unreadable = [f.name for f in spec.features if isinstance(f, CategoricalFeature) and f.name not in rows.unseen_features]
    if unreadable:
        notes.append(f"the raw column of {', '.join(unreadable)} is not in the table: no unseen-category rate for it")

    results = []
    for m, month_expected in zip(book.months, expected):
        results.append(_month_result(spec, m, baseline, month_expected, thresholds, passes,
                                     is_mature(m.month, window, as_of), rows, two_sided))
    drifts = _drifts(spec, results)
    status = worst(*(r.status for r in results)) or OK
    return MonitorReport(
        run_id=uuid.uuid4().hex,
        run_at=datetime.now(timezone.utc).replace(microsecond=0).isoformat(),
        model_name=spec.model.name,
        model_version=spec.model.version,
        model_fingerprint=fingerprint,
        as_of=as_of,
        performance_window_months=window,
        source=source,
        baseline_source=baseline_source,
        baseline_rows=baseline.rows,
        expected_monthly_rows=None if expected_rows == TRAILING else expected[0],
        thresholds=thresholds.as_dict(),
        months=tuple(results),
        drifts=tuple(drifts),
        notes=tuple(notes),
        status=status,
        volume_rule=volume_rule,
        rows=sum(m.rows for m in book.months),
        calibration_test="two-sided" if two_sided else "one-sided",
        rows_out_of_range=book.rows_out_of_range,
        months_in_range=book.months_in_range,
    )


def _expected_rows(book: BookMonths, baseline: Baseline, given: str | float,
                   with_rows: Sequence[MonthRow]) -> tuple[list[float | None], str]:
    """The rows each reported month is judged against, and the rule in words."""
    if given == TRAILING:
        counts = [m.rows for m in book.months]
        expected = [float(median(counts[max(0, k - TRAILING_MONTHS):k])) if k else None for k in range(len(counts))]
        return expected, (f"volume against the median of the book's own previous {TRAILING_MONTHS} months "
                          "(trailing; the first month has none)")
    if given == DEVELOPMENT:
        rows = baseline.rows_per_month
        if rows is None:
            rows = float(median([m.rows for m in with_rows]))
        return [rows] * len(book.months), f"volume against the development rows per month ({rows:,.0f})"
    if isinstance(given, bool) or not isinstance(given, (int, float)) or not given > 0:
        raise InputError(f"expected rows {given!r}: give 'trailing', 'development' or a positive monthly count")
    return [float(given)] * len(book.months), f"volume against the expected {float(given):,.0f} rows a month (given)"


def _month_result(spec: Spec, m: MonthRow, baseline: Baseline, expected_rows: float | None, thresholds: Thresholds,
                  passes: _Passes, mature: bool, rows: MonitoredRows, two_sided: bool = False) -> MonthResult:
    volume_change = None if expected_rows is None else _ratio(m.rows, expected_rows)
    volume_change = None if volume_change is None else volume_change - 1.0
    volume_status = None
    if volume_change is not None:
        volume_status = worst(thresholds.volume_drop.status(max(-volume_change, 0.0)),
                              thresholds.volume_rise.status(max(volume_change, 0.0)))
    if not m.rows:
        volume_status = ALERT  # a month without rows is a finding whatever it is judged against

    # score bands
    bands = sorted(baseline.score_bands, key=lambda b: b.lower)
    counts = passes.bins.get(m.month)
    band_rows = counts.bands if counts else [0] * len(bands)
    expected = [b.share for b in bands]
    shift = _shift(band_rows, expected, baseline.rows, thresholds) if m.rows and bands else _Shift(None, None, None)
    score_psi_status = _material_and_real(shift.psi, thresholds.score_psi, shift.critical_watch, shift.critical_alert)
    score_bands = tuple(BinShare(_band_label(b.lower, b.upper), b.share, _ratio(n, m.rows), None)
                        for b, n in zip(bands, band_rows))
    mean_score = _ratio(m.score_sum, m.rows)

    characteristics, quality = [], []
    month_bins = counts.bins if counts else [{} for _ in spec.features]
    for i, feature in enumerate(spec.features):
        characteristics.append(_characteristic(spec, feature, i, m, month_bins[i], baseline, thresholds))
        quality.append(_quality(feature, m, month_bins[i], baseline, thresholds, rows))

    calibration = discrimination_record = None
    if mature and rows.has_outcome and m.rows:
        calibration = _calibration(spec, passes.grades.get(m.month, {}), m, thresholds, two_sided)
        discrimination_record = _discrimination(passes.histograms.get(m.month), baseline, thresholds)

    stability_status = worst(score_psi_status, *(c.status for c in characteristics))
    quality_status = worst(volume_status, *(q.status for q in quality))
    calibration_status = calibration.status if calibration else None
    discrimination_status = discrimination_record.status if discrimination_record else None
    return MonthResult(
        month=m.month.label,
        rows=m.rows,
        maturity=MATURE if mature else IMMATURE,
        expected_rows=expected_rows,
        volume_change=volume_change,
        volume_status=volume_status,
        score_psi=shift.psi,
        score_psi_critical_value=shift.critical_watch,
        score_psi_status=score_psi_status,
        mean_score=mean_score,
        mean_score_shift=_change(mean_score, baseline.mean_score),
        score_bands=score_bands,
        characteristics=tuple(characteristics),
        quality=tuple(quality),
        calibration=calibration,
        discrimination=discrimination_record,
        stability_status=stability_status,
        data_quality_status=quality_status,
        calibration_status=calibration_status,
        discrimination_status=discrimination_status,
        status=worst(stability_status, quality_status, calibration_status, discrimination_status),
    )


def _band_label(lower: float, upper: float) -> str:
    def edge(value: float) -> str:
        if value in (float("inf"), float("-inf")):
            return "inf" if value > 0 else "-inf"
        return f"{value:g}"

    return f"[{edge(lower)}, {edge(upper)})"


def _characteristic(spec: Spec, feature, index: int, m: MonthRow, counts: dict[str, int], baseline: Baseline,
                    thresholds: Thresholds) -> CharacteristicStability:
    labels = feature_bins(spec, feature)
    expected_shares = baseline.feature_shares.get(feature.name)
    if expected_shares is None or not m.rows:
        return CharacteristicStability(feature.name, None, None, None, None, ())
    actual_rows = [counts.get(b.label, 0) for b in labels]
    expected = [expected_shares.get(b.label, 0.0) for b in labels]
    shift = _shift(actual_rows, expected, baseline.rows, thresholds)
    actual = [n / m.rows for n in actual_rows]
    if isinstance(feature, LinearFeature):
        # points vary inside a linear term's bins: its shift is the change of its mean points
        dev_mean = baseline.mean_points.get(feature.name)
        shift_points = None if dev_mean is None else m.points_sums[index] / m.rows - dev_mean
    else:
        shift_points = points_shift(actual, expected, [b.points for b in labels])
    status = _material_and_real(shift.psi, thresholds.characteristic_psi, shift.critical_watch, shift.critical_alert)
    bins = tuple(BinShare(b.label, e, a, b.points) for b, e, a in zip(labels, expected, actual))
    return CharacteristicStability(feature.name, shift.psi, shift.critical_watch, shift_points, status, bins)


def _quality(feature, m: MonthRow, counts: dict[str, int], baseline: Baseline, thresholds: Thresholds,
             rows: MonitoredRows) -> FeatureQuality:
    if not m.rows:
        return FeatureQuality(feature.name, None, None, None)
    shares = baseline.feature_shares.get(feature.name, {})
    missing_label = feature.missing.label

    def rate(actual: float, expected: float | None, limit: Limit) -> tuple[float | None, str | None]:
        change = _change(actual, expected)
        if change is None:
            return None, None
        confidence = thresholds.psi_confidence
        critical = [rate_change_critical_value(expected, baseline.rows, m.rows, level)
                    for level in (confidence.watch, confidence.alert)]
        return change, _material_and_real(abs(change), limit, *critical)

    missing_rate = counts.get(missing_label, 0) / m.rows
    missing_change, missing_status = rate(missing_rate, shares.get(missing_label), thresholds.missing_rate_change)
    unseen = unseen_change = unseen_status = catch_all = catch_all_change = catch_all_status = None
    if isinstance(feature, CategoricalFeature):
        catch_all = counts.get(feature.other.label, 0) / m.rows
        catch_all_change, catch_all_status = rate(catch_all, shares.get(feature.other.label),
                                                  thresholds.catch_all_share_change)
        if feature.name in rows.unseen_features:
            unseen = m.unseen_rows.get(feature.name, 0) / m.rows
            unseen_change, unseen_status = rate(unseen, baseline.unseen_rate.get(feature.name),
                                                thresholds.unseen_rate_change)
    return FeatureQuality(feature.name, missing_rate, missing_change, missing_status, unseen, unseen_change,
                          unseen_status, catch_all, catch_all_change, catch_all_status,
                          worst(missing_status, unseen_status, catch_all_status))


def _calibration(spec: Spec, grades: dict[str, GradeSums], m: MonthRow, thresholds: Thresholds,
                 two_sided: bool = False) -> Calibration:
    limit = thresholds.calibration_p_value
    records = []
    total_rows = total_events = 0
    pd_sum = numerator = variance = squared_error = 0.0
    for grade in spec.grades:
        sums = grades.get(grade.name) or GradeSums(0, 0, 0.0, 0.0, 0.0, 0.0)
        n, d = sums.rows, sums.events
        mean_pd = _ratio(sums.pd_sum, n)
        jeffreys = jeffreys_p(n, d, mean_pd, two_sided) if n else None
        records.append(GradeCalibration(grade.name, n, d, mean_pd, _ratio(d, n), jeffreys,
                                        binomial_p(n, d, mean_pd, two_sided) if n else None, limit.status(jeffreys)))
        total_rows += n
        total_events += d
        pd_sum += sums.pd_sum
        numerator += sums.spiegelhalter_sum
        variance += sums.spiegelhalter_variance
        squared_error += sums.squared_error_sum
    mean_pd = _ratio(pd_sum, total_rows)
    jeffreys = jeffreys_p(total_rows, total_events, mean_pd, two_sided) if total_rows else None
    chi = grade_chi_square([g.rows for g in records], [g.events for g in records], [g.mean_pd for g in records])
    z = spiegelhalter(numerator, variance) if total_rows else None
    chi_p = chi.p_value if chi else None
    return Calibration(
        rows=total_rows,
        events=total_events,
        mean_pd=mean_pd,
        event_rate=_ratio(total_events, total_rows),
        jeffreys_p=jeffreys,
        binomial_p=binomial_p(total_rows, total_events, mean_pd, two_sided) if total_rows else None,
        chi_square=chi.statistic if chi else None,
        chi_square_df=chi.degrees_of_freedom if chi else None,
        chi_square_p=chi_p,
        spiegelhalter_z=z.z if z else None,
        spiegelhalter_p=z.p_value if z else None,
        brier=brier(squared_error, total_rows),
        rows_without_outcome=m.rows - m.outcome_rows,
        chi_square_status=limit.status(chi_p),
        status=worst(limit.status(jeffreys), ALERT if limit.status(chi_p) == ALERT else None),
        grades=tuple(records),
    )


def _discrimination(sums: HistogramSums | None, baseline: Baseline, thresholds: Thresholds) -> Discrimination:
    if sums is None:
        return Discrimination(0, 0, None, None, None, None, None, None, None)
    found = discrimination(sums)
    if found is None:
        return Discrimination(int(sums.events), int(sums.non_events), None, None, None, None, None, None, None)
    change = _change(found.auc, baseline.auc)
    status = None
    if change is not None:
        critical = [None if found.auc_standard_error is None else
                    z_value(level) * found.auc_standard_error
                    for level in (thresholds.psi_confidence.watch, thresholds.psi_confidence.alert)]
        status = _material_and_real(-change, thresholds.auc_drop, *critical)
    return Discrimination(int(sums.events), int(sums.non_events), found.auc, found.auc_lower, found.auc_upper,
                          found.gini, found.ks, change, status)


def _drifts(spec: Spec, results: Sequence[MonthResult]) -> list[Drift]:
    """Every characteristic, ranked: worst status first, then highest PSI over the run."""
    measured = [r for r in results if r.rows]
    drifts = []
    for i, feature in enumerate(spec.features):
        series = [(r.month, r.characteristics[i]) for r in measured if r.characteristics[i].psi is not None]
        if not series:
            continue
        worst_month, worst_item = max(series, key=lambda s: s[1].psi)
        latest = series[-1][1]
        flagged = sum(1 for _, c in series if c.status in (WATCH, ALERT))
        drifts.append(Drift(feature.name, worst_month, worst_item.psi, worst(*(c.status for _, c in series)),
                            latest.psi, latest.points_shift, flagged))
    drifts.sort(key=lambda d: (-STATUS_ORDER[d.status], -d.worst_psi, d.feature))
    return drifts
