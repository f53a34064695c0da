"""The monitoring run, start to end: the one place its sequence is written.

A run (:func:`monitor_table`) reads the book's columns, takes the monitored rows (scored
already, or scored on the fly into a temporary table), reads the months, finds the baseline
(the spec's own, or measured now from another table or from a range of the book's months),
measures every reported month against it and, last, appends the run to the history, so a run
that fails part-way leaves the history as it was. :func:`measure_development` is the same first
steps ending in a baseline.
"""
from __future__ import annotations

from datetime import date

from sqlglot import exp

from ..engines import Engine
from ..errors import InputError
from ..sources import check_columns, describe_source, float_columns, source_relation, spec_columns
from ..spec.canonical import fingerprint
from ..spec.model import Baseline, Spec
from .baseline import measure_baseline, small_baseline_warning
from .history import write_history
from .measure import measure_book, monitored_relation, read_months
from .months import MONTHS_IN_RANGE, Month, check_months_in_range
from .passes import fingerprint_rows
from .queries import MonitoredRows, is_scored, monitored_rows, months_in
from .records import MonitorReport
from .thresholds import DEFAULT_THRESHOLDS, Thresholds


def monitor_table(
    spec: Spec,
    engine: Engine,
    table: str,
    month_column: str,
    as_of: date,
    outcome: str | None = None,
    thresholds: Thresholds = DEFAULT_THRESHOLDS,
    baseline_table: str | None = None,
    baseline_months: tuple[Month, Month] | None = None,
    record_history: bool = True,
    months_in_range: int = MONTHS_IN_RANGE,
    expected_rows: str | float = "trailing",
    two_sided: bool = False,
) -> MonitorReport:
    """Monitor ``table`` month by month against a baseline; append the run to the history.

    The baseline is the spec's own, or one measured now from ``baseline_table`` or from the
    months ``baseline_months`` (first, last) of ``table``. ``table`` may be scored already (it
    has the scored columns, and ``month_column`` / ``outcome`` kept as keys) or raw (it is
    scored on the fly). Months are reported when they lie in the ``months_in_range`` months
    ending with the as-of month (:mod:`scoremon.monitor.months`); rows of earlier months are
    counted as out of range. ``expected_rows`` is what each month's volume is judged against:
    ``"trailing"`` (default: the median of the book's own previous six months), a monthly
    count, or ``"development"`` (the baseline's rows per month). ``two_sided`` makes the
    calibration tests two-sided (default one-sided: only more events than the PD predicts is
    flagged). Raises :class:`InputError` for anything the user can fix; the history is
    written last, in one transaction, so a failing run leaves it unchanged.
    """
    if baseline_table is not None and baseline_months is not None:
        raise InputError("give a baseline table or a range of baseline months, not both")
    if baseline_table is None and baseline_months is None and spec.baseline is None:
        raise InputError(f"{spec.model.name} version {spec.model.version} has no baseline section; write one "
                         "with `scoremon baseline SPEC --table DEVELOPMENT --out NEW.yaml`, or give "
                         "--baseline-table or --baseline-months")
    check_months_in_range(months_in_range)
    source = source_relation(table=table)
    rows, notes = _monitored(spec, engine, source, month_column, outcome)
    with monitored_relation(engine, rows) as relation:
        book = read_months(engine, spec, rows, relation, as_of, month_column, months_in_range)
        if baseline_table is not None:
            baseline_source = f"table {baseline_table}"
            baseline = measure_development(spec, engine, source_relation(table=baseline_table), outcome, None,
                                           baseline_source)
        elif baseline_months is not None:
            first, last = baseline_months
            values = book.values_between(first, last)
            if not values:
                raise InputError(f"no rows of {table} are in the baseline months {first} to {last}")
            baseline_source = f"months {first} to {last} of {table}"
            baseline = measure_baseline(engine, spec, rows, relation, months_in(values), baseline_source, as_of,
                                        months_in_range)
        else:
            baseline = spec.baseline
            baseline_source = f"the spec's baseline ({baseline.computed_from or 'source not recorded'})"
        warning = small_baseline_warning(baseline.rows)
        if warning:
            notes.append(warning.removeprefix("warning: "))
        report = measure_book(engine, spec, rows, relation, book, as_of=as_of, month_column=month_column,
                              baseline=baseline, baseline_source=baseline_source, thresholds=thresholds,
                              source=f"table {table}", notes=notes, fingerprint=fingerprint(spec),
                              expected_rows=expected_rows, two_sided=two_sided)
    if record_history:
        write_history(engine, report)
    return report


def measure_development(spec: Spec, engine: Engine, source: exp.Expression, outcome: str | None = None,
                        month_column: str | None = None, computed_from: str = "",
                        months_in_range: int = MONTHS_IN_RANGE) -> Baseline:
    """The baseline of a development table (raw or scored), measured inside ``engine``.

    Development shares per score band (deciles) and per feature bin, volume (per month when
    ``month_column`` is given), mean score and points, unseen-category rates, and with an
    ``outcome`` column the event rate, AUC and KS. Months are kept by the monitor's rule, the
    ``months_in_range`` months ending this month. Raises :class:`InputError` when the table
    does not fit the spec or holds no rows.
    """
    check_months_in_range(months_in_range)
    rows, _ = _monitored(spec, engine, source, month_column, outcome)
    with monitored_relation(engine, rows) as relation:
        return measure_baseline(engine, spec, rows, relation, None, computed_from,
                                months_in_range=months_in_range)


def _monitored(spec: Spec, engine: Engine, source: exp.Expression, month_column: str | None,
               outcome: str | None) -> tuple[MonitoredRows, list[str]]:
    """The monitored rows over ``source`` (scored already, or scored on the fly), and notes."""
    columns = describe_source(engine, source, spec_columns(spec) + [name for name in (month_column, outcome) if name])
    notes = []
    if is_scored(spec, columns):
        if "model_fingerprint" in columns:
            expected = fingerprint(spec)
            others = sorted(fp for fp in fingerprint_rows(engine, source) if fp != expected)
            if others:
                raise InputError(f"the table was scored by a model with fingerprint {', '.join(others)}, not by "
                                 f"{spec.model.name} version {spec.model.version} ({expected}); score it with this "
                                 "spec or monitor it with the spec that scored it")
        else:
            notes.append("the scored table has no model_fingerprint column; it is taken to be scored by this spec")
    else:
        problems = check_columns(spec, columns, ())
        if problems:
            raise InputError("the table is neither scored by this spec nor has the columns to score it", problems)
        notes.append("the table is scored on the fly by the compiled scoring SQL")
    return monitored_rows(spec, source, columns, month_column, outcome, float_columns(columns)), notes
