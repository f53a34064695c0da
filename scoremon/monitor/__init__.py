"""Monitoring: stability, data quality, calibration and discrimination of a book, month by month.

Modules, in the order a run uses them:

``run``         the monitoring run's sequence, start to end (the one owner of it)
``queries``     the aggregate queries as sqlglot trees (one grouped pass per kind of grouping)
``passes``      runs each aggregate pass and reads its rows into a small record
``months``      month values, the calendar, maturity
``baseline``    the development distribution measured in the engine; writing it into a spec
``statistics``  PSI, critical values, Jeffreys, binomial, chi-square, Spiegelhalter, Brier,
                AUC / Gini / KS with a DeLong interval, from aggregates only
``thresholds``  ok / watch / alert levels, defaults and overrides
``measure``     runs the passes and builds the records
``records``     the result records
``history``     appends a run to the history tables in one transaction; reads them back

Only aggregate tables reach Python; the engine is reached through the
:class:`~scoremon.engines.Engine` protocol only. The package's face is the run
(:func:`monitor_table`, :func:`measure_development`) and what its callers hand it or get back.
"""
from .baseline import spec_text_with_baseline, write_spec_with_baseline
from .history import History, model_name_of, read_history
from .months import Month, parse_month
from .records import MonitorReport, MonthResult
from .run import measure_development, monitor_table
from .thresholds import DEFAULT_THRESHOLDS, Thresholds, load_thresholds

__all__ = [
    "DEFAULT_THRESHOLDS",
    "History",
    "MonitorReport",
    "Month",
    "MonthResult",
    "Thresholds",
    "load_thresholds",
    "measure_development",
    "model_name_of",
    "monitor_table",
    "parse_month",
    "read_history",
    "spec_text_with_baseline",
    "write_spec_with_baseline",
]
