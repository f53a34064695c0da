"""The history pack: one model's monitoring over a range of runs or months, as one HTML file
(``scoremon pack SPEC_OR_MODEL --db DB … --html FILE``).

Built from the :class:`~scoremon.monitor.history.History` read back from the history tables:
no pass over rows. Months run along the x axis; each model version met in the range is its
own line, and for each version and month the figures come from the latest run of that version
that measured the month (a later run has seen more outcomes). Sections: the runs read; score
PSI by month; realised event rate against mean PD by month; AUC by month; the status of each
month under each version.
"""
from __future__ import annotations

from datetime import datetime, timezone

from ...monitor.history import Figure, History
from ...monitor.statistics import jeffreys_interval
from . import charts, palette
from .page import (
    DASH,
    Section,
    Stamp,
    figure,
    number,
    percent,
    render_page,
    status_cell,
    status_legend,
    table,
)


def pack_html(history: History, engine: str, made_at: str | None = None) -> str:
    """The self-contained HTML history pack of ``history``; ``engine`` is the dialect it was read from."""
    runs = history.runs
    latest = _latest_overall(history)
    months = sorted(latest)
    span = (f"{months[0]} to {months[-1]}" if months else "none")
    sources = sorted({r.source for r in runs})
    stamp = Stamp(
        title="History pack",
        model_name=history.model_name,
        versions=history.versions,
        engine=engine,
        population=", ".join(sources),
        rows=sum(int(f[("data_quality", "rows")].value or 0) for f in latest.values()
                 if ("data_quality", "rows") in f),
        run_at=made_at or datetime.now(timezone.utc).isoformat(timespec="seconds"),
        as_of=max(r.as_of for r in runs),
        extra=(("months", span), ("runs", f"{len(runs)}, from {runs[0].run_at} to {runs[-1].run_at}")),
    )
    by_version = {v: history.latest(v) for v in history.versions}
    sections = [_runs(history)]
    if months:
        sections += [_psi(history, months, by_version), _calibration(history, months, by_version),
                     _auc(months, by_version), _statuses(history, months, by_version)]
    return render_page(stamp, sections)


def _latest_overall(history: History) -> dict[str, dict[tuple[str, str], Figure]]:
    found: dict[str, dict] = {}
    for run in history.runs:
        for month, figures in history.figures.get(run.run_id, {}).items():
            found[month] = figures
    return found


def _version_words(version: tuple[str, str]) -> str:
    return f"version {version[0]} ({version[1][:8]})"


def _value(figures: dict | None, family: str, metric: str) -> float | None:
    if figures is None:
        return None
    found = figures.get((family, metric))
    return None if found is None else found.value


def _status(figures: dict | None, family: str, metric: str) -> str | None:
    if figures is None:
        return None
    found = figures.get((family, metric))
    return None if found is None else found.status


def _immature(months, by_version) -> list[int]:
    """Months no version has mature outcomes for."""
    return [i for i, month in enumerate(months)
            if not any(_value(found.get(month, (None, None))[1], "calibration", "mature") == 1.0
                       for found in by_version.values())]


# ---------------------------------------------------------------- 1 runs

def _runs(history: History) -> Section:
    rows = [[r.run_id, r.run_at, r.model_version, r.model_fingerprint, r.as_of, r.source, str(r.months),
             status_cell(r.status)] for r in history.runs]
    return Section("Runs read", (table(["run", "run at", "version", "fingerprint", "as of", "book", "months", "status"],
                                       rows, [False] * 6 + [True, False]),),
                   "Every run of the model in the range, oldest first. Where runs overlap, a month's figures come "
                   "from the latest run of each version that measured it.", "runs")


# ---------------------------------------------------------------- 2 score PSI

def _psi(history: History, months, by_version) -> Section:
    limits = history.runs[-1].thresholds.get("score_psi", {})
    watch, alert = float(limits.get("watch", 0.10)), float(limits.get("alert", 0.25))
    lines = {v: [_value(found.get(m, (None, None))[1], "stability", "score_psi") for m in months]
             for v, found in by_version.items()}
    measured = [x for values in lines.values() for x in values if x is not None]
    top = max(max(measured, default=0.0) * 1.15, watch * 1.35)

    def paint(fig, ax):
        xs = list(range(len(months)))
        for index, (version, values) in enumerate(lines.items()):
            style = palette.series(index)
            ax.plot(xs, [v if v is not None else float("nan") for v in values], color=style.colour,
                    linestyle=style.line, label=_version_words(version))
            found = by_version[version]
            statuses = [_status(found.get(m, (None, None))[1], "stability", "score_psi") for m in months]
            charts.status_points(ax, xs, values, statuses, style.colour, label=False)
        charts.psi_bands(ax, watch, alert, top)
        charts.month_axis(ax, months)
        ax.set_ylabel("PSI of the score bands")
        fig.legend(loc="outside upper center", ncols=min(4, len(lines)))

    svg = charts.chart("pack-psi", "Score PSI by month, one line per model version", 3.0, paint)
    caption = ("Look for a line climbing towards the watch line; markers show each month's status "
               "(○ ok, △ watch, ■ alert).")
    numbers = _numbers_by_version(months, by_version, [("score PSI", "stability", "score_psi", 4)])
    return Section("Score stability", (figure(svg, caption, numbers),),
                   f"PSI of the score bands against each version's baseline; bands {watch:g} watch and {alert:g} "
                   "alert (common practice), as used by the latest run.", "psi")


# ---------------------------------------------------------------- 3 calibration

def _calibration(history: History, months, by_version) -> Section:
    def paint(fig, ax):
        xs = list(range(len(months)))
        nan = float("nan")
        count_versions = len(by_version)
        for index, (version, found) in enumerate(by_version.items()):
            style = palette.series(index)
            figures = [found.get(m, (None, None))[1] for m in months]
            pds = [_value(f, "calibration", "mean_pd") for f in figures]
            ax.plot(xs, [p if p is not None else nan for p in pds], color=style.colour, linestyle=style.line,
                    label=f"{_version_words(version)}: mean PD")
            offset = (index - (count_versions - 1) / 2) * 0.18
            for x, f in zip(xs, figures):
                rows, events = _value(f, "calibration", "rows"), _value(f, "calibration", "events")
                rate = _value(f, "calibration", "event_rate")
                if rows is None or events is None or rate is None:
                    continue
                interval = jeffreys_interval(int(rows), int(events))
                ax.vlines(x + offset, interval[0], interval[1], color=style.colour, linewidth=1.0)
                ax.plot([x + offset], [rate], marker=style.marker, color=style.colour, markersize=4,
                        markerfacecolor=palette.PAPER)
            ax.plot([], [], marker=style.marker, color=style.colour, markerfacecolor=palette.PAPER, linestyle="none",
                    label=f"{_version_words(version)}: realised, 95 % Jeffreys")
        charts.shade_immature(ax, _immature(months, by_version))
        charts.month_axis(ax, months)
        charts.percent_axis(ax, "y", 1)
        ax.set_ylim(bottom=0, top=ax.get_ylim()[1] * 1.25)
        ax.set_ylabel("rate")
        fig.legend(loc="outside upper center", ncols=2)

    svg = charts.chart("pack-calibration", "Realised event rate against mean PD by month, per version", 3.2, paint)
    caption = ("Look for months where the line of mean PD misses the realised rate's interval; hatched months "
               "had no mature outcomes in any run.")
    numbers = _numbers_by_version(months, by_version, [("mean PD", "calibration", "mean_pd", None),
                                                       ("realised", "calibration", "event_rate", None),
                                                       ("Jeffreys p", "calibration", "jeffreys_p", 4)],
                                  status=("calibration", "status"))
    return Section("Calibration", (figure(svg, caption, numbers),),
                   "On mature months only; intervals are 95 % Jeffreys intervals of the realised rate.",
                   "calibration")


# ---------------------------------------------------------------- 4 AUC

def _auc(months, by_version) -> Section:
    def paint(fig, ax):
        xs = list(range(len(months)))
        nan = float("nan")
        for index, (version, found) in enumerate(by_version.items()):
            style = palette.series(index)
            figures = [found.get(m, (None, None))[1] for m in months]
            low = [_value(f, "discrimination", "auc_lower") for f in figures]
            high = [_value(f, "discrimination", "auc_upper") for f in figures]
            ax.fill_between(xs, [v if v is not None else nan for v in low], [v if v is not None else nan for v in high],
                            color=style.colour, alpha=0.15, linewidth=0)
            aucs = [_value(f, "discrimination", "auc") for f in figures]
            ax.plot(xs, [a if a is not None else nan for a in aucs], color=style.colour, linestyle=style.line,
                    marker=style.marker, markersize=3.5, label=f"{_version_words(version)}: AUC, 95 % band")
            baseline = next((a - c for a, c in ((_value(f, "discrimination", "auc"),
                                                 _value(f, "discrimination", "auc_change")) for f in figures)
                             if a is not None and c is not None), None)
            if baseline is not None:  # labelled in the legend: several versions' baselines may lie close
                ax.axhline(baseline, color=style.colour, linestyle=":", linewidth=1.0,
                           label=f"version {version[0]}: baseline AUC {baseline:.3f}")
        charts.shade_immature(ax, _immature(months, by_version))
        charts.month_axis(ax, months)
        ax.set_ylabel("AUC")
        bottom, top = ax.get_ylim()
        ax.set_ylim(bottom, top + (top - bottom) * 0.25)
        fig.legend(loc="outside upper center", ncols=2)

    svg = charts.chart("pack-auc", "AUC by month, per version", 3.0, paint)
    caption = "Look for a band that sinks below its version's dotted baseline; hatched months are immature."
    numbers = _numbers_by_version(months, by_version, [("AUC", "discrimination", "auc", 4),
                                                       ("low", "discrimination", "auc_lower", 4),
                                                       ("high", "discrimination", "auc_upper", 4)],
                                  status=("discrimination", "auc_change"))
    return Section("Discrimination", (figure(svg, caption, numbers),),
                   "AUC of each mature month with its DeLong 95 % band, against each version's baseline AUC.", "auc")


# ---------------------------------------------------------------- 5 statuses

def _statuses(history: History, months, by_version) -> Section:
    header = ["month"] + [_version_words(v) for v in by_version]
    rows = []
    for month in months:
        row = [month]
        for found in by_version.values():
            figures = found.get(month, (None, None))[1]
            row.append(status_cell(_status(figures, "month", "status")) if figures is not None else DASH)
        rows.append(row)
    return Section("Status by month", (status_legend(), table(header, rows, [False] * len(header))),
                   "Each month's overall status under each version (– : the version was not run on that month).",
                   "status")


def _numbers_by_version(months, by_version, columns, status: tuple[str, str] | None = None):
    header = ["month", "version", "run"] + [c[0] for c in columns] + (["status"] if status else [])
    rows = []
    for month in months:
        for version, found in by_version.items():
            run, figures = found.get(month, (None, None))
            if figures is None:
                continue
            row = [month, version[0], run.run_id[:12]]
            for _, family, metric, digits in columns:
                value = _value(figures, family, metric)
                row.append(percent(value, 2) if digits is None else number(value, digits))
            if status:
                row.append(status_cell(_status(figures, *status)))
            rows.append(row)
    return table(header, rows, [False, False, False] + [True] * len(columns) + ([False] if status else []))

