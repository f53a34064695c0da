"""Monitoring: stability, data quality, calibration and discrimination of a book, month by month.

Modules, in the order a run uses them:

``queries``     the aggregate queries as sqlglot trees (one grouped pass per kind of grouping)
``months``      month values, the calendar, maturity
``baseline``    the development distribution measured in the engine; writing it into a spec
``statistics``  PSI, critical values, Jeffreys, binomial, chi-square, Spiegelhalter, Brier,
                AUC / Gini / KS with a DeLong interval, from aggregates only
``thresholds``  ok / watch / alert levels, defaults and overrides
``measure``     runs the passes and builds the records
``records``     the result records
``history``     appends a run to the history tables in one transaction; reads them back

Only aggregate tables reach Python; the engine is reached through the
:class:`~scoremon.engines.Engine` protocol only.
"""
from .baseline import measure_baseline, spec_text_with_baseline
from .history import History, read_history, write_history
from .measure import BookMonths, measure_book, read_months
from .months import Month, parse_month
from .queries import MonitoredRows, monitored_rows
from .records import MonitorReport, MonthResult
from .thresholds import DEFAULT_THRESHOLDS, Thresholds, load_thresholds

__all__ = [
    "DEFAULT_THRESHOLDS",
    "BookMonths",
    "History",
    "MonitorReport",
    "MonitoredRows",
    "Month",
    "MonthResult",
    "Thresholds",
    "load_thresholds",
    "measure_baseline",
    "measure_book",
    "monitored_rows",
    "parse_month",
    "read_history",
    "read_months",
    "spec_text_with_baseline",
    "write_history",
]
