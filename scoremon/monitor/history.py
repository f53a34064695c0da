"""Monitoring history: every run appended to two tables in the monitored database.

``scoremon_monitor_runs``     one row per run: run id, when, the model's identity and
                              fingerprint, the as-of date, what was monitored against what,
                              the thresholds used (as JSON text), the run's status;
``scoremon_monitor_metrics``  one row per figure: run id, month, family, metric, subject
                              (a feature, a grade, a score band, or empty), value, status;
                              a figure of the whole run (``rows_out_of_range``) has an
                              empty month.

:func:`read_history` reads them back for one model (every run, or some runs, over a range of
months) into a :class:`History`, for the history pack.

A run only ever adds rows: re-running a month adds a run and leaves earlier runs alone. The
tables are created if missing and the rows inserted in one transaction
(:meth:`~scoremon.engines.Engine.execute_atomically`), so a run that fails part-way leaves the
history exactly as it was (on DuckDB and PostgreSQL; Spark has no transactions and runs the
statements one by one, see :class:`~scoremon.engines.SparkEngine`). Readable copies of the definitions: ``sql/monitor_history.sql``
(regenerate with ``python -m scoremon.monitor.history > sql/monitor_history.sql``).
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import Iterator, Sequence

from sqlglot import exp

from ..dialects import render_sql
from ..engines import Engine
from ..errors import EngineError, InputError
from ..spec import load_spec
from ..trees import column, identifier, integer, number, text
from .records import MATURE, MonitorReport

RUNS_TABLE = "scoremon_monitor_runs"
METRICS_TABLE = "scoremon_monitor_metrics"
INSERT_BATCH = 500  # rows per INSERT statement, all inside the one transaction

RUNS_COLUMNS = (
    ("run_id", "VARCHAR", True),
    ("run_at", "TIMESTAMP", True),
    ("model_name", "VARCHAR", True),
    ("model_version", "VARCHAR", True),
    ("model_fingerprint", "VARCHAR", True),
    ("as_of", "DATE", True),
    ("performance_window_months", "INTEGER", True),
    ("source", "VARCHAR", True),
    ("baseline_source", "VARCHAR", True),
    ("thresholds", "VARCHAR", True),
    ("months", "INTEGER", True),
    ("status", "VARCHAR", True),
)
METRICS_COLUMNS = (
    ("run_id", "VARCHAR", True),
    ("month", "VARCHAR", True),
    ("family", "VARCHAR", True),
    ("metric", "VARCHAR", True),
    ("subject", "VARCHAR", True),
    ("value", "DOUBLE", False),
    ("status", "VARCHAR", False),
)


@dataclass(frozen=True)
class MetricRow:
    """One figure of one month: ``subject`` is a feature, grade or score band, or empty."""

    month: str
    family: str
    metric: str
    subject: str
    value: float | None
    status: str | None = None


def _table(name: str) -> exp.Table:
    return exp.Table(this=identifier(name))


def _create(name: str, columns) -> exp.Create:
    definitions = []
    for column, kind, required in columns:
        constraints = [exp.ColumnConstraint(kind=exp.NotNullColumnConstraint())] if required else []
        definitions.append(exp.ColumnDef(this=identifier(column), kind=exp.DataType.build(kind), constraints=constraints))
    return exp.Create(this=exp.Schema(this=_table(name), expressions=definitions), kind="TABLE", exists=True)


def create_statements() -> list[exp.Create]:
    """``CREATE TABLE IF NOT EXISTS`` for both history tables."""
    return [_create(RUNS_TABLE, RUNS_COLUMNS), _create(METRICS_TABLE, METRICS_COLUMNS)]


def history_ddl_text(dialect: str = "duckdb") -> str:
    """The readable copy kept in ``sql/monitor_history.sql``."""
    header = ("-- The monitoring history tables scoremon creates (if missing) in the monitored database.\n"
              "-- Generated from scoremon/monitor/history.py; regenerate with\n"
              "--   python -m scoremon.monitor.history > sql/monitor_history.sql\n"
              "-- Runs only ever add rows. status is ok, watch or alert; value is NULL when a figure\n"
              "-- cannot be computed (no rows, no events). month is empty for a figure of the whole run\n"
              "-- (rows_out_of_range: rows whose month is out of range, left out).\n")
    return header + "\n" + "\n\n".join(render_sql(s, dialect) + ";" for s in create_statements()) + "\n"


def _value(value) -> exp.Expression:
    if value is None:
        return exp.Null()
    if isinstance(value, str):
        return text(value)
    if isinstance(value, int) and not isinstance(value, bool):
        return integer(value)
    value = float(value)
    return exp.Null() if not math.isfinite(value) else number(value)


def metric_rows(report: MonitorReport) -> list[MetricRow]:
    """Every figure of ``report`` that the history keeps, month by month."""
    rows: list[MetricRow] = []
    if report.rows_out_of_range:
        # a figure of the whole run, not of a month: its month is empty
        rows.append(MetricRow("", "data_quality", "rows_out_of_range", "", report.rows_out_of_range))
    for m in report.months:
        def add(family: str, metric: str, value, status: str | None = None, subject: str = "") -> None:
            if value is not None or status is not None:
                rows.append(MetricRow(m.month, family, metric, subject, value, status))

        add("month", "status", None, m.status)
        add("data_quality", "rows", m.rows)
        add("data_quality", "volume_change", m.volume_change, m.volume_status)
        add("data_quality", "status", None, m.data_quality_status)
        for q in m.quality:
            for metric in ("missing_rate", "unseen_rate", "catch_all_share"):
                add("data_quality", metric, getattr(q, metric), subject=q.feature)
                add("data_quality", f"{metric}_change", getattr(q, f"{metric}_change"),
                    getattr(q, f"{metric}_status"), subject=q.feature)
        add("stability", "score_psi", m.score_psi, m.score_psi_status)
        add("stability", "score_psi_critical_value", m.score_psi_critical_value)
        add("stability", "mean_score", m.mean_score)
        add("stability", "mean_score_shift", m.mean_score_shift)
        add("stability", "status", None, m.stability_status)
        for band in m.score_bands:
            add("stability", "score_band_share", band.actual, subject=band.label)
        for c in m.characteristics:
            add("stability", "characteristic_psi", c.psi, c.status, subject=c.feature)
            add("stability", "points_shift", c.points_shift, subject=c.feature)
        add("calibration", "mature", 1 if m.maturity == MATURE else 0)
        if m.calibration is not None:
            cal = m.calibration
            add("calibration", "status", None, cal.status)
            for metric in ("rows", "events", "mean_pd", "event_rate", "jeffreys_p", "binomial_p", "chi_square",
                           "chi_square_df", "spiegelhalter_z", "spiegelhalter_p", "brier", "rows_without_outcome"):
                add("calibration", metric, getattr(cal, metric))
            add("calibration", "chi_square_p", cal.chi_square_p, cal.chi_square_status)
            for g in cal.grades:
                for metric in ("rows", "events", "mean_pd", "event_rate", "binomial_p"):
                    add("calibration", metric, getattr(g, metric), subject=g.grade)
                add("calibration", "jeffreys_p", g.jeffreys_p, g.status, subject=g.grade)
        if m.discrimination is not None:
            d = m.discrimination
            add("discrimination", "status", None, d.status)
            for metric in ("events", "non_events", "auc", "auc_lower", "auc_upper", "gini", "ks"):
                add("discrimination", metric, getattr(d, metric))
            add("discrimination", "auc_change", d.auc_change, d.status)
    return rows


def _batches(items: Sequence, size: int) -> Iterator[Sequence]:
    for start in range(0, len(items), size):
        yield items[start:start + size]


def insert_statements(report: MonitorReport) -> list[exp.Insert]:
    """The INSERTs that append ``report`` to the history (the run row first)."""
    run_at = datetime.fromisoformat(report.run_at).strftime("%Y-%m-%d %H:%M:%S")
    run_row = exp.Tuple(expressions=[
        text(report.run_id),
        exp.Cast(this=text(run_at), to=exp.DataType.build("TIMESTAMP")),
        text(report.model_name), text(report.model_version), text(report.model_fingerprint),
        exp.Cast(this=text(report.as_of.isoformat()), to=exp.DataType.build("DATE")),
        integer(report.performance_window_months),
        text(report.source), text(report.baseline_source),
        text(json.dumps(report.thresholds, sort_keys=True)),
        integer(len(report.months)),
        text(report.status or "ok"),
    ])
    statements = [_insert(RUNS_TABLE, RUNS_COLUMNS, [run_row])]
    rows = [exp.Tuple(expressions=[text(report.run_id), text(r.month), text(r.family), text(r.metric), text(r.subject),
                                   _value(r.value), _value(r.status)])
            for r in metric_rows(report)]
    statements += [_insert(METRICS_TABLE, METRICS_COLUMNS, list(batch)) for batch in _batches(rows, INSERT_BATCH)]
    return statements


def _insert(table: str, columns, rows: list[exp.Tuple]) -> exp.Insert:
    target = exp.Schema(this=_table(table), expressions=[identifier(name) for name, _, _ in columns])
    return exp.Insert(this=target, expression=exp.Values(expressions=rows))


def write_history(engine: Engine, report: MonitorReport) -> int:
    """Append ``report`` to the history tables in one transaction; return the metric rows written.

    Raises :class:`~scoremon.errors.EngineError` (and, where the engine
    :attr:`~scoremon.engines.Engine.is_transactional`, leaves the history unchanged) when the
    database refuses any statement.
    """
    engine.execute_atomically(create_statements() + insert_statements(report),
                              "appending the run to the monitoring history")
    return len(metric_rows(report))


# ---------------------------------------------------------------- reading the history back

# The figures a history pack draws: (family, metric) of the whole month (subject empty).
PACK_METRICS = (
    ("month", "status"),
    ("data_quality", "rows"),
    ("stability", "score_psi"),
    ("stability", "score_psi_critical_value"),
    ("stability", "mean_score_shift"),
    ("calibration", "mature"),
    ("calibration", "status"),
    ("calibration", "rows"),
    ("calibration", "events"),
    ("calibration", "mean_pd"),
    ("calibration", "event_rate"),
    ("calibration", "jeffreys_p"),
    ("discrimination", "auc"),
    ("discrimination", "auc_lower"),
    ("discrimination", "auc_upper"),
    ("discrimination", "auc_change"),
)


@dataclass(frozen=True)
class RunRow:
    """One run as the history's runs table holds it (dates and times as ISO text)."""

    run_id: str
    run_at: str
    model_version: str
    model_fingerprint: str
    as_of: str
    source: str
    baseline_source: str
    months: int
    status: str
    thresholds: dict


@dataclass(frozen=True)
class Figure:
    """One figure of one month of one run."""

    value: float | None
    status: str | None


@dataclass(frozen=True)
class History:
    """What the history holds for one model: its runs (oldest first) and their month figures.

    ``figures[run_id][month][(family, metric)]`` is a :class:`Figure`; only the whole-month
    figures of :data:`PACK_METRICS` are read.
    """

    model_name: str
    runs: tuple[RunRow, ...]
    figures: dict[str, dict[str, dict[tuple[str, str], Figure]]]
    first_month: str | None = None
    last_month: str | None = None

    @property
    def versions(self) -> tuple[tuple[str, str], ...]:
        """(version, fingerprint) pairs in the order the runs first met them."""
        seen: dict[tuple[str, str], None] = {}
        for run in self.runs:
            seen.setdefault((run.model_version, run.model_fingerprint))
        return tuple(seen)

    def latest(self, version: tuple[str, str]) -> dict[str, tuple[RunRow, dict[tuple[str, str], Figure]]]:
        """Month → (run, its figures) from the latest run of ``version`` that measured the month.

        A later run knows more outcomes (a later as-of date), so its figures stand for the month.
        """
        found: dict[str, tuple[RunRow, dict]] = {}
        for run in self.runs:  # oldest first: a later run overwrites
            if (run.model_version, run.model_fingerprint) != version:
                continue
            for month, figures in self.figures.get(run.run_id, {}).items():
                found[month] = (run, figures)
        return dict(sorted(found.items()))


def _history_queries(model_name: str, run_ids: Sequence[str], first: str | None,
                     last: str | None) -> tuple[exp.Select, exp.Select]:
    """The two queries a pack needs: the model's runs, and their whole-month figures."""
    runs_filter = exp.EQ(this=column("model_name"), expression=text(model_name))
    if run_ids:
        runs_filter = exp.and_(runs_filter, exp.In(this=column("run_id"), expressions=[text(r) for r in run_ids]))
    runs = (exp.select(*[column(c) for c in ("run_id", "run_at", "model_version", "model_fingerprint", "as_of",
                                              "source", "baseline_source", "months", "status", "thresholds")])
            # run_at has whole seconds: runs within one second are ordered by their as-of date
            .from_(_table(RUNS_TABLE)).where(runs_filter).order_by(column("run_at"), column("as_of"),
                                                                   column("run_id")))
    wanted = exp.or_(*[exp.and_(exp.EQ(this=column("family"), expression=text(family)),
                                exp.EQ(this=column("metric"), expression=text(metric)))
                       for family, metric in PACK_METRICS])
    chosen = exp.select(column("run_id")).from_(_table(RUNS_TABLE)).where(runs_filter.copy())
    conditions = [exp.In(this=column("run_id"), query=exp.Subquery(this=chosen)),
                  exp.EQ(this=column("subject"), expression=text("")), exp.paren(wanted)]
    if first is not None:
        conditions.append(exp.GTE(this=column("month"), expression=text(first)))
    if last is not None:
        conditions.append(exp.LTE(this=column("month"), expression=text(last)))
    metrics = (exp.select(*[column(c) for c in ("run_id", "month", "family", "metric", "value", "status")])
               .from_(_table(METRICS_TABLE)).where(exp.and_(*conditions)))
    return runs, metrics


def _iso(value) -> str:
    return value.isoformat(sep=" ") if isinstance(value, datetime) else (
        value.isoformat() if hasattr(value, "isoformat") else str(value))


def model_name_of(spec_or_model: str) -> str:
    """The model a history pack is for: the ``model.name`` of a spec file, or the text as a
    model name when it is not a file. Raises :class:`~scoremon.errors.SpecError` for a spec
    file that does not load."""
    path = Path(spec_or_model)
    if path.suffix.lower() in (".yaml", ".yml") or path.is_file():
        return load_spec(path).model.name
    return spec_or_model


def _thresholds(value) -> dict:
    try:
        found = json.loads(value) if value else {}
    except (TypeError, ValueError):  # written by scoremon as JSON; anything else is shown without thresholds
        return {}
    return found if isinstance(found, dict) else {}


def read_history(engine: Engine, model_name: str, run_ids: Sequence[str] = (), first: str | None = None,
                 last: str | None = None) -> History:
    """The history of ``model_name``: every run (or the runs ``run_ids``), months ``first`` to
    ``last`` (``YYYY-MM``, both included; None: no bound).

    Raises :class:`InputError` when the database holds no history, no run of the model, or a
    run id that is not one of the model's runs.
    """
    runs_query, metrics_query = _history_queries(model_name, run_ids, first, last)
    try:
        # the only two engine calls of the pack, kept together
        run_rows = engine.query(runs_query, "reading the monitoring runs")
        figure_rows = engine.query(metrics_query, "reading the monitoring figures") if run_rows else []
    except EngineError as error:
        raise InputError(f"could not read the monitoring history ({RUNS_TABLE}, {METRICS_TABLE}): {error}; give "
                         "the database that `scoremon monitor` wrote its history to") from error
    runs = tuple(RunRow(str(r.run_id), _iso(r.run_at), str(r.model_version), str(r.model_fingerprint), _iso(r.as_of),
                        str(r.source), str(r.baseline_source), int(r.months), str(r.status), _thresholds(r.thresholds))
                 for r in run_rows)
    if run_ids:
        missing = sorted(set(run_ids) - {r.run_id for r in runs})
        if missing:
            raise InputError(f"run {', '.join(missing)} is not a monitoring run of {model_name} in this database; "
                             "list the runs with their ids from the table " + RUNS_TABLE)
    if not runs:
        raise InputError(f"the monitoring history holds no run of model {model_name!r}; check the model name "
                         "(the spec's model.name) and the database")
    figures: dict[str, dict[str, dict[tuple[str, str], Figure]]] = {}
    for row in figure_rows:
        value = None if row.value is None or (isinstance(row.value, float) and math.isnan(row.value)) else float(row.value)
        figures.setdefault(str(row.run_id), {}).setdefault(str(row.month), {})[(str(row.family), str(row.metric))] = (
            Figure(value, None if row.status is None else str(row.status)))
    return History(model_name, runs, figures, first, last)


if __name__ == "__main__":
    print(history_ddl_text(), end="")
