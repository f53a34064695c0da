"""The HTML report of one monitoring run (``scoremon monitor … --html FILE``).

Built only from the :class:`~scoremon.monitor.records.MonitorReport` the run computed: no
query, no pass over rows. Sections: the status of every month by family; score bands,
baseline against the latest month; score PSI by month; the characteristic × month PSI grid;
the latest month's mean score shift split into each characteristic's points shift; calibration
(the latest mature month by grade, and by month); discrimination by month; data quality by
month. Months whose outcomes are not known yet are hatched and labelled, never drawn as zero.
"""
from __future__ import annotations

from typing import Sequence

from ...monitor.records import MATURE, MonitorReport, MonthResult
from ...monitor.statistics import jeffreys_interval
from . import charts, palette
from .page import (
    DASH,
    Markup,
    Section,
    Stamp,
    count,
    escape,
    figure,
    join,
    number,
    paragraph,
    percent,
    render_page,
    status_badge,
    status_cell,
    status_legend,
    table,
    tag,
)

FAMILIES = (("stability_status", "stability"), ("data_quality_status", "data quality"),
            ("calibration_status", "calibration"), ("discrimination_status", "discrimination"))
WATERFALL_BARS = 8  # characteristics drawn one by one; the rest share one bar


def monitor_html(report: MonitorReport, engine: str) -> str:
    """The self-contained HTML report of ``report``; ``engine`` is the dialect it ran on.

    ``scoremon monitor … --html FILE`` calls it with the run's report and writes the text with
    :func:`scoremon.files.write_text`.
    """
    stamp = Stamp(
        title="Monitoring report",
        model_name=report.model_name,
        versions=((report.model_version, report.model_fingerprint),),
        engine=engine,
        population=report.source,
        rows=sum(m.rows for m in report.months),
        run_at=report.run_at,
        as_of=report.as_of.isoformat(),
        extra=(("baseline", f"{report.baseline_source}, {report.baseline_rows:,} rows"),
               ("months", f"{report.months[0].month} to {report.months[-1].month}; outcomes mature "
                          f"{report.performance_window_months} months after the month ends"
                          if report.months else "none"),
               ("run", report.run_id)),
    )
    lead = [tag("p", join(["Overall status of the run: ", status_badge(report.status), f" — {_tally(report)}."]),
                class_="lead")]
    sections = [_overview(report)]
    if report.months:
        sections += [_bands(report), _score_psi(report), _grid(report), _waterfall(report), _calibration(report),
                     _discrimination(report), _quality(report)]
    sections.append(_settings(report))
    return render_page(stamp, sections, lead)


def _tally(report: MonitorReport) -> str:
    counts = {s: sum(1 for m in report.months if m.status == s) for s in ("alert", "watch", "ok")}
    return f"{len(report.months)} months: " + ", ".join(f"{n} {s}" for s, n in counts.items())


def _months(report: MonitorReport) -> list[str]:
    return [m.month for m in report.months]


def _immature(report: MonitorReport) -> list[int]:
    return [i for i, m in enumerate(report.months) if m.maturity != MATURE]


# ---------------------------------------------------------------- 1 overview

def _overview(report: MonitorReport) -> Section:
    header = ["month", "rows", "score PSI"] + [words for _, words in FAMILIES] + ["month status"]
    rows = []
    for m in report.months:
        rows.append([m.month, count(m.rows), number(m.score_psi, 3)]
                    + [status_cell(getattr(m, attribute), "" if getattr(m, attribute) else
                                   ("immature" if m.maturity != MATURE and attribute in
                                    ("calibration_status", "discrimination_status") else ""), quiet_ok=True)
                       for attribute, _ in FAMILIES]
                    + [status_cell(m.status)])
    blocks = [status_legend(), table(header, rows, [False, True, True] + [False] * 5, class_="numbers grid")]
    if report.drifts:
        drift_rows = [[d.feature, d.worst_month, number(d.worst_psi, 3), status_cell(d.status),
                       number(d.latest_psi, 3), number(d.latest_points_shift, 2, signed=True), str(d.months_flagged)]
                      for d in report.drifts]
        blocks += [paragraph("Characteristics that drifted, worst first:"),
                   table(["characteristic", "worst month", "its PSI", "status", "latest PSI",
                          "latest points shift", "months flagged"], drift_rows,
                         [False, False, True, False, True, True, True])]
    for note in report.notes:
        blocks.append(paragraph(f"Note: {note}.", class_="note"))
    return Section("Status by month", tuple(blocks), "Each month's status in each family of checks; "
                   "calibration and discrimination need mature outcomes.", "status")


# ---------------------------------------------------------------- 2 score bands

def _bands(report: MonitorReport) -> Section:
    latest = report.latest_month_with_rows
    bands = latest.score_bands
    if not bands:
        return Section("Score bands", (paragraph("The baseline has no score bands."),), key="bands")
    labels = [b.label for b in bands]
    expected = [b.expected or 0.0 for b in bands]
    actual = [b.actual or 0.0 for b in bands]

    def paint(fig, ax):
        import numpy as np

        y = np.arange(len(bands))
        height = 0.38
        first = ax.barh(y + height / 2, expected, height, color=palette.REFERENCE.colour, label="baseline")
        second = ax.barh(y - height / 2, actual, height, color=palette.COMPARED.colour, hatch="///",
                         edgecolor=palette.PAPER, linewidth=0, label=f"{latest.month} (latest month)")
        charts.label_bars(ax, first, [percent(v) for v in expected])
        charts.label_bars(ax, second, [percent(v) for v in actual])
        ax.set_yticks(y, labels)
        ax.set_ylabel("score band (lowest scores at the bottom)")
        ax.grid(axis="x")
        ax.grid(axis="y", visible=False)
        charts.percent_axis(ax, "x")
        ax.set_xlim(0, max(expected + actual + [0.01]) * 1.18)
        ax.set_xlabel("share of rows")
        fig.legend(loc="outside upper center", ncols=2)

    svg = charts.chart("bands", "Score-band shares, baseline against the latest month", 0.36 * len(bands) + 1.0,
                       paint)
    low = sum(actual[: len(actual) // 2]) - sum(expected[: len(expected) // 2])
    caption = (f"Look for bands whose two bars differ: in {latest.month} the lower half of the bands holds "
               f"{percent(abs(low))} {'more' if low >= 0 else 'fewer'} of the rows than at baseline "
               f"(score PSI {number(latest.score_psi, 3)}).")
    numbers = table(["score band", "baseline", latest.month, "change"],
                    [[b.label, percent(b.expected, 2), percent(b.actual, 2),
                      percent(None if b.actual is None or b.expected is None else b.actual - b.expected, 2,
                              signed=True)] for b in reversed(bands)])
    return Section("Score bands", (figure(svg, caption, numbers),),
                   "The development score's deciles: at baseline each holds about a tenth of the rows.", "bands")


# ---------------------------------------------------------------- 3 score PSI by month

def _psi_limits(report: MonitorReport, key: str) -> tuple[float, float]:
    limits = report.thresholds.get(key, {})
    return float(limits.get("watch", 0.10)), float(limits.get("alert", 0.25))


def _score_psi(report: MonitorReport) -> Section:
    months = _months(report)
    values = [m.score_psi for m in report.months]
    critical = [m.score_psi_critical_value for m in report.months]
    watch, alert = _psi_limits(report, "score_psi")
    measured = [v for v in values if v is not None]
    top = max(max(measured, default=0.0) * 1.15, watch * 1.35)

    def paint(fig, ax):
        xs = list(range(len(months)))
        ax.plot(xs, [v if v is not None else float("nan") for v in values], color=palette.REFERENCE.colour,
                label="score PSI")
        charts.status_points(ax, xs, values, [m.score_psi_status for m in report.months], palette.REFERENCE.colour)
        ax.step(xs, [c if c is not None else float("nan") for c in critical], where="mid",
                color=palette.CRITICAL_LINE, linestyle=":", linewidth=1.0, label="critical value (sampling alone)")
        charts.psi_bands(ax, watch, alert, top)
        charts.month_axis(ax, months)
        ax.set_ylabel("PSI of the score bands")
        fig.legend(loc="outside upper center", ncols=4)

    svg = charts.chart("score-psi", "Score PSI by month", 3.0, paint)
    flagged = [m.month for m in report.months if m.score_psi_status in ("watch", "alert")]
    caption = ("Look for points above the watch line and above the dotted critical value: "
               + (f"{len(flagged)} months are flagged, from {flagged[0]}." if flagged else "no month is flagged."))
    numbers = table(["month", "rows", "score PSI", "critical value", "status"],
                    [[m.month, count(m.rows), number(m.score_psi, 4), number(m.score_psi_critical_value, 4),
                      status_cell(m.score_psi_status)] for m in report.months],
                    [False, True, True, True, False])
    return Section("Score stability by month", (figure(svg, caption, numbers),),
                   f"PSI against the baseline's score bands; a month is flagged only when its PSI passes both "
                   f"the band ({watch:g} watch, {alert:g} alert, common practice) and the critical value that "
                   f"sampling alone reaches (Yurdakul & Naranjo 2020).", "psi")


# ---------------------------------------------------------------- 4 characteristic × month grid

def _wrap_name(name: str) -> Markup:
    return Markup(str(escape(name)).replace("_", "_<wbr>"))


def _grid(report: MonitorReport) -> Section:
    features = [c.feature for c in report.months[0].characteristics]
    head = join([tag("th", "month", scope="col")]
                + [Markup(f'<th scope="col" class="n">{_wrap_name(f)}</th>') for f in features])
    body = []
    for m in report.months:
        by_feature = {c.feature: c for c in m.characteristics}
        cells = [tag("th", m.month, scope="row", class_="month")]
        for f in features:
            c = by_feature.get(f)
            cells.append(status_cell(c.status if c else None, number(c.psi if c else None, 3), quiet_ok=True,
                                     title=f"{f}, {m.month}: PSI {number(c.psi if c else None, 4)}"))
        body.append(tag("tr", join(cells)))
    grid = tag("div", tag("table", join([tag("thead", tag("tr", head)), tag("tbody", join(body))]),
                          class_="grid"), class_="scroll")
    watch, alert = _psi_limits(report, "characteristic_psi")
    flagged = sorted({c.feature for m in report.months for c in m.characteristics if c.status in ("watch", "alert")})
    caption = ("Look down each column for runs of △ watch and ■ alert: "
               + (", ".join(flagged) + " drift." if flagged else "no characteristic drifts."))
    block = tag("figure", join([grid, tag("figcaption", caption)]))
    return Section("Characteristic stability", (status_legend(), block),
                   f"PSI of each characteristic over its bins (missing and catch-all bins included), by month; "
                   f"bands {watch:g} / {alert:g} with the same critical-value guard as the score. ○ marks ok.",
                   "characteristics")


# ---------------------------------------------------------------- 5 mean score shift

def _waterfall(report: MonitorReport) -> Section:
    latest = report.latest_month_with_rows
    shifts = [(c.feature, c.points_shift) for c in latest.characteristics if c.points_shift is not None]
    if latest.mean_score is None or latest.mean_score_shift is None:
        return Section("Mean score shift", (paragraph("The latest month has no mean score."),), key="shift")
    end = latest.mean_score
    start = end - latest.mean_score_shift
    ordered = sorted(shifts, key=lambda s: -abs(s[1]))
    shown, rest = ordered[:WATERFALL_BARS], ordered[WATERFALL_BARS:]
    steps = list(shown)
    if rest:
        steps.append((f"{len(rest)} other characteristics", sum(s for _, s in rest)))
    unexplained = latest.mean_score_shift - sum(s for _, s in shifts)
    if abs(unexplained) >= 0.005:
        steps.append(("not from bin shares", unexplained))

    def paint(fig, ax):
        labels = ["baseline mean"] + [name for name, _ in steps] + [f"{latest.month} mean"]
        running = start
        lows, highs = [start, end], [start, end]
        bars = []
        for name, value in steps:
            bars.append((running, value))
            lows.append(min(running, running + value))
            highs.append(max(running, running + value))
            running += value
        span = max(highs) - min(lows) or 1.0
        left = min(lows) - span * 0.25
        right = max(highs) + span * 0.25
        y = list(range(len(labels)))[::-1]
        ax.barh(y[0], start - left, left=left, color=palette.MUTED, height=0.6)
        ax.barh(y[-1], end - left, left=left, color=palette.MUTED, height=0.6)
        ax.text(start, y[0], f" {start:.1f}", va="center", ha="left", fontsize=charts.FONT_SIZE - 0.5)
        ax.text(end, y[-1], f" {end:.1f}", va="center", ha="left", fontsize=charts.FONT_SIZE - 0.5)
        totals = [start] + [base + value for base, value in bars]
        for row, total in zip(y, totals):  # connectors: each step starts where the one above ended
            ax.plot([total, total], [row - 0.3, row - 0.7], color=palette.MUTED, linewidth=0.7, linestyle=":")
        for row, (base, value) in zip(y[1:-1], bars):
            down = value < 0
            ax.barh(row, value, left=base, height=0.6, color=palette.COMPARED.colour if down else palette.REFERENCE.colour,
                    hatch="///" if down else None, edgecolor=palette.PAPER, linewidth=0)
            # + 0.0 after rounding: a shift that rounds to zero reads +0.00, not -0.00
            ax.text(max(base, base + value), row, f" {round(value, 2) + 0.0:+.2f}", va="center", ha="left",
                    fontsize=charts.FONT_SIZE - 0.5)
        ax.set_yticks(y, labels)
        ax.set_xlim(left, right + span * 0.1)
        ax.grid(axis="x")
        ax.grid(axis="y", visible=False)
        ax.set_xlabel("mean score (points)")

    height = 0.3 * (len(steps) + 2) + 0.9
    svg = charts.chart("shift", f"Mean score from baseline to {latest.month}, by characteristic", height, paint)
    biggest = ordered[0] if ordered else None
    caption = (f"Look for the longest bars: of the {latest.mean_score_shift:+.2f} points between the baseline and "
               f"{latest.month}, {biggest[0]} accounts for {biggest[1]:+.2f}." if biggest else
               "No characteristic has a points shift.")
    numbers = table(["step", "points"], [["baseline mean score", number(start, 2)]]
                    + [[name, number(value, 2, signed=True)] for name, value in ordered]
                    + ([["not from bin shares", number(unexplained, 2, signed=True)]] if abs(unexplained) >= 0.005 else [])
                    + [[f"{latest.month} mean score", number(end, 2)]])
    return Section("Mean score shift", (figure(svg, caption, numbers),),
                   "Each characteristic's points shift, Σ (share now − share at baseline) × points over its bins; "
                   "on an additive scorecard they add up to the change of the mean score. Falls are ochre and "
                   "hatched, rises blue.", "shift")


# ---------------------------------------------------------------- 6 calibration

NO_OUTCOMES = ("No month has outcomes to test: no outcome column was given, or no month is mature yet "
               "as of {as_of}.")


def _calibration(report: MonitorReport) -> Section:
    if all(m.calibration is None for m in report.months):
        return Section("Calibration", (paragraph(NO_OUTCOMES.format(as_of=report.as_of)),), key="calibration")
    blocks = []
    latest = report.latest_mature_month
    if latest is None:
        blocks.append(paragraph("No month is mature yet: calibration needs outcomes that are known."))
    else:
        blocks.append(_grade_chart(latest))
    blocks.append(_calibration_by_month(report))
    return Section("Calibration", tuple(blocks),
                   "Realised event rate against the mean PD the model predicted, on mature months only; "
                   "intervals are 95 % Jeffreys intervals of the realised rate.", "calibration")


def _grade_chart(month: MonthResult) -> Markup:
    grades = [g for g in month.calibration.grades if g.rows > 0]
    if not grades:
        return paragraph(f"No grade of {month.month} has rows with a known outcome.")
    intervals = [jeffreys_interval(g.rows, g.events) for g in grades]

    def paint(fig, ax):
        xs = list(range(len(grades)))
        pds = [g.mean_pd for g in grades]
        rates = [g.event_rate for g in grades]
        positive = [v for v in pds + rates + [i[0] for i in intervals if i] if v]
        bottom = min(positive, default=0.001) / 2.5
        ax.set_yscale("log")
        ax.scatter(xs, [p if p else float("nan") for p in pds], marker="D", s=34, color=palette.REFERENCE.colour,
                   zorder=3, label="mean PD (predicted)")
        for x, rate, interval in zip(xs, rates, intervals):
            if interval is None:
                continue
            lower = max(interval[0], bottom)
            ax.vlines(x + 0.12, lower, interval[1], color=palette.COMPARED.colour, linewidth=1.4, zorder=2)
            shown = rate if rate else bottom
            ax.scatter([x + 0.12], [shown], marker="o" if rate else "v", s=30, color=palette.COMPARED.colour, zorder=3)
        ax.scatter([], [], marker="o", s=30, color=palette.COMPARED.colour,
                   label="realised event rate, 95 % Jeffreys interval")
        ax.set_ylim(bottom, max(v for v in [i[1] for i in intervals if i] + positive) * 1.6)
        ax.set_xticks(xs, [f"{g.grade}\n{palette.status_look(g.status).mark} {g.status or DASH}" for g in grades])
        ax.set_xlim(-0.6, len(grades) - 0.4)
        charts.log_percent_axis(ax)
        ax.set_ylabel("rate (log scale)")
        ax.set_xlabel("grade, and the status of its Jeffreys test")
        ax.legend(loc="upper left")

    svg = charts.chart("calibration-grades", f"Realised rate against mean PD per grade, {month.month}", 3.1, paint)
    above = [g.grade for g, i in zip(grades, intervals) if i and g.mean_pd is not None and i[0] > g.mean_pd]
    caption = (f"Look for diamonds below the interval: in {month.month}, the latest mature month, "
               + (f"grades {', '.join(above)} have more events than their PD predicts." if above else
                  "every grade's PD lies inside or above its interval."))
    numbers = table(["grade", "rows", "events", "mean PD", "realised", "interval low", "interval high", "Jeffreys p",
                     "status"],
                    [[g.grade, count(g.rows), count(g.events), percent(g.mean_pd, 2), percent(g.event_rate, 2),
                      percent(i[0] if i else None, 2), percent(i[1] if i else None, 2), number(g.jeffreys_p, 4),
                      status_cell(g.status)] for g, i in zip(grades, intervals)],
                    [False] + [True] * 7 + [False])
    return figure(svg, caption, numbers)


def _calibration_by_month(report: MonitorReport) -> Markup:
    months = _months(report)
    cal = [m.calibration for m in report.months]
    intervals = [jeffreys_interval(c.rows, c.events) if c else None for c in cal]

    def paint(fig, ax):
        xs = list(range(len(months)))
        nan = float("nan")
        ax.plot(xs, [c.mean_pd if c and c.mean_pd is not None else nan for c in cal], color=palette.REFERENCE.colour,
                linestyle=palette.REFERENCE.line, marker="D", markersize=3.5, label="mean PD (predicted)")
        ax.fill_between(xs, [i[0] if i else nan for i in intervals], [i[1] if i else nan for i in intervals],
                        color=palette.COMPARED_BAND, linewidth=0, label="95 % Jeffreys interval")
        rates = [c.event_rate if c else None for c in cal]
        ax.plot(xs, [r if r is not None else nan for r in rates], color=palette.COMPARED.colour,
                linestyle=palette.COMPARED.line, label="realised event rate")
        charts.status_points(ax, xs, rates, [c.status if c else None for c in cal], palette.COMPARED.colour)
        charts.shade_immature(ax, _immature(report))
        charts.month_axis(ax, months)
        charts.percent_axis(ax, "y", 1)
        top = max([v for v in [i[1] for i in intervals if i] + [c.mean_pd for c in cal if c and c.mean_pd]] or [0.1])
        ax.set_ylim(0, top * 1.35)
        ax.set_ylabel("rate")
        fig.legend(loc="outside upper center", ncols=3)

    svg = charts.chart("calibration-months", "Realised event rate against mean PD by month", 3.1, paint)
    flagged = [m.month for m in report.months if m.calibration_status in ("watch", "alert")]
    caption = ("Look for the predicted line leaving the shaded interval: "
               + (f"months {_month_list(flagged)} are flagged." if flagged else "no month is flagged.")
               + " Hatched months are immature.")
    numbers = table(["month", "rows with outcome", "events", "mean PD", "realised", "interval low", "interval high",
                     "Jeffreys p", "grade χ² p", "Brier", "status"],
                    [[m.month, count(c.rows) if c else "immature", count(c.events) if c else DASH,
                      percent(c.mean_pd if c else None, 2), percent(c.event_rate if c else None, 2),
                      percent(i[0] if i else None, 2), percent(i[1] if i else None, 2),
                      number(c.jeffreys_p if c else None, 4), number(c.chi_square_p if c else None, 4),
                      number(c.brier if c else None, 4), status_cell(m.calibration_status)]
                     for m, c, i in zip(report.months, cal, intervals)],
                    [False] + [True] * 9 + [False])
    return figure(svg, caption, numbers)


def _month_list(months: Sequence[str]) -> str:
    if len(months) <= 4:
        return ", ".join(months)
    return f"{months[0]} to {months[-1]} ({len(months)} months)"


# ---------------------------------------------------------------- 7 discrimination

def _discrimination(report: MonitorReport) -> Section:
    if all(m.discrimination is None for m in report.months):
        return Section("Discrimination", (paragraph(NO_OUTCOMES.format(as_of=report.as_of)),), key="discrimination")
    months = _months(report)
    found = [m.discrimination for m in report.months]
    baseline = next((d.auc - d.auc_change for d in found if d and d.auc is not None and d.auc_change is not None),
                    None)
    drop = report.thresholds.get("auc_drop", {})

    def paint(fig, ax):
        xs = list(range(len(months)))
        nan = float("nan")
        ax.fill_between(xs, [d.auc_lower if d and d.auc_lower is not None else nan for d in found],
                        [d.auc_upper if d and d.auc_upper is not None else nan for d in found],
                        color=palette.BAND, linewidth=0, label="95 % DeLong interval")
        aucs = [d.auc if d else None for d in found]
        ax.plot(xs, [a if a is not None else nan for a in aucs], color=palette.REFERENCE.colour, label="AUC")
        charts.status_points(ax, xs, aucs, [d.status if d else None for d in found], palette.REFERENCE.colour)
        if baseline is not None:
            charts.threshold(ax, baseline, f"baseline {baseline:.3f}", palette.MUTED, "-")
            if "watch" in drop:
                charts.threshold(ax, baseline - float(drop["watch"]), f"watch {baseline - float(drop['watch']):.3f}",
                                 palette.WATCH_LINE, "--", below=True)
        values = [v for d in found if d for v in (d.auc_lower, d.auc_upper) if v is not None]
        if baseline is not None:
            values += [baseline, baseline - float(drop.get("watch", 0.0))]
        if values:
            pad = (max(values) - min(values)) * 0.15 or 0.01
            ax.set_ylim(min(values) - pad, max(values) + pad * 2.2)
        charts.shade_immature(ax, _immature(report))
        charts.month_axis(ax, months)
        ax.set_ylabel("AUC (Gini = 2·AUC − 1)")
        fig.legend(loc="outside upper center", ncols=4)

    svg = charts.chart("auc", "AUC by month with its confidence band", 3.0, paint)
    flagged = [m.month for m in report.months if m.discrimination_status in ("watch", "alert")]
    caption = ("Look for the band falling below the baseline line: "
               + (f"months {_month_list(flagged)} are flagged." if flagged else
                  "no mature month is flagged.") + " Hatched months are immature.")
    numbers = table(["month", "events", "non-events", "AUC", "low", "high", "Gini", "KS", "change", "status"],
                    [[m.month, count(d.events) if d else "immature", count(d.non_events) if d else DASH,
                      number(d.auc if d else None, 4), number(d.auc_lower if d else None, 4),
                      number(d.auc_upper if d else None, 4), number(d.gini if d else None, 4),
                      number(d.ks if d else None, 4), number(d.auc_change if d else None, 4, signed=True),
                      status_cell(m.discrimination_status)] for m, d in zip(report.months, found)],
                    [False] + [True] * 8 + [False])
    return Section("Discrimination", (figure(svg, caption, numbers),),
                   "AUC of each mature month, computed exactly from score histograms, with its DeLong interval; "
                   + (f"the baseline's AUC is {baseline:.4f}." if baseline is not None else
                      "the baseline has no AUC."), "discrimination")


# ---------------------------------------------------------------- 8 data quality

def _quality(report: MonitorReport) -> Section:
    return Section("Data quality", (_volume(report), _rates(report)),
                   "Rows per month against development, and per characteristic the share of rows missing, "
                   "with a category no group lists (unseen), and in the catch-all group.", "quality")


def _volume(report: MonitorReport) -> Markup:
    months = _months(report)
    expected = report.expected_monthly_rows

    def paint(fig, ax):
        from matplotlib.ticker import FuncFormatter

        xs = list(range(len(months)))
        ax.bar(xs, [m.rows for m in report.months], color=palette.BAND, edgecolor=palette.REFERENCE.colour,
               linewidth=0.6, label="rows")
        for x, m in zip(xs, report.months):
            if m.volume_status in ("watch", "alert"):
                look = palette.status_look(m.volume_status)
                ax.annotate(f"{look.mark} {look.word}", (x, m.rows), xytext=(0, 3), textcoords="offset points",
                            ha="center", fontsize=charts.FONT_SIZE - 1.5, rotation=90)
        if expected:
            charts.threshold(ax, expected, f"development: {expected:,.0f} a month", palette.REFERENCE.colour, "--")
        charts.month_axis(ax, months)
        ax.set_ylim(0, max([m.rows for m in report.months] + [expected or 0]) * 1.25)
        ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:,.0f}"))
        ax.set_ylabel("rows")

    svg = charts.chart("volume", "Rows by month against the development rows per month", 2.5, paint)
    flagged = [m.month for m in report.months if m.volume_status in ("watch", "alert")]
    caption = ("Look for bars far from the dashed line: "
               + (f"months {_month_list(flagged)} are flagged." if flagged else "no month's volume is flagged."))
    numbers = table(["month", "rows", "change against development", "status"],
                    [[m.month, count(m.rows), percent(m.volume_change, 1, signed=True), status_cell(m.volume_status)]
                     for m in report.months], [False, True, True, False])
    return figure(svg, caption, numbers)


RATES = (("missing_rate", "missing", palette.SERIES[0]), ("unseen_rate", "unseen", palette.SERIES[1]),
         ("catch_all_share", "catch-all", palette.SERIES[2]))


def _rates(report: MonitorReport) -> Markup:
    months = _months(report)
    features = [q.feature for q in report.months[0].quality]
    if not features:
        return paragraph("No characteristic has data-quality figures.")
    columns = 4
    rows = -(-len(features) // columns)
    series = {f: {key: [] for key, _, _ in RATES} for f in features}
    statuses = {f: {key: [] for key, _, _ in RATES} for f in features}
    for m in report.months:
        by_feature = {q.feature: q for q in m.quality}
        for f in features:
            q = by_feature.get(f)
            for key, _, _ in RATES:
                series[f][key].append(getattr(q, key) if q else None)
                statuses[f][key].append(getattr(q, f"{key}_status") if q else None)

    def paint(fig, axes):
        import numpy as np
        from matplotlib.lines import Line2D

        flat = list(np.atleast_1d(axes).ravel())
        xs = list(range(len(months)))
        for ax, f in zip(flat, features):
            for key, words, style in RATES:
                values = series[f][key]
                if all(v is None for v in values):
                    continue
                ax.plot(xs, [v if v is not None else float("nan") for v in values], color=style.colour,
                        linestyle=style.line, linewidth=1.3, label=words)
                for status, marker in palette.STATUS_MARKERS.items():
                    if status == "ok":
                        continue
                    points = [(x, v) for x, v, s in zip(xs, values, statuses[f][key]) if s == status and v is not None]
                    if points:
                        ax.scatter(*zip(*points), marker=marker, s=22, color=style.colour, zorder=4)
            ax.set_title(f, fontsize=charts.FONT_SIZE, loc="left")
            charts.percent_axis(ax, "y", 0)
            ax.set_ylim(bottom=0)
            if ax.get_ylim()[1] < 0.05:
                ax.set_ylim(0, 0.05)
            charts.month_axis(ax, months, every=max(6, -(-len(months) // 5)))
            ax.tick_params(labelsize=charts.FONT_SIZE - 1.5)
        for index, ax in enumerate(flat):
            if index >= len(features):
                ax.set_visible(False)
            elif index + columns < len(features):  # a panel below shows the months
                ax.tick_params(labelbottom=False)
        handles = [Line2D([], [], color=s.colour, linestyle=s.line, label=w) for _, w, s in RATES]
        handles += [Line2D([], [], color=palette.INK, marker=m, linestyle="none", label=f"status {s}")
                    for s, m in palette.STATUS_MARKERS.items() if s != "ok"]
        height = fig.get_figheight()
        fig.legend(handles=handles, loc="upper center", ncols=len(handles), bbox_to_anchor=(0.5, 1.0))
        # fixed margins, in inches turned into fractions: legend on top, month labels below
        fig.subplots_adjust(left=0.055, right=0.99, top=1 - 0.42 / height, bottom=0.62 / height,
                            wspace=0.32, hspace=0.42 * rows / max(height - 1.0, 1.0))

    svg = charts.chart("rates", "Missing, unseen and catch-all rates by month, per characteristic",
                       1.55 * rows + 0.9, paint, rows=rows, columns=columns, fixed_layout=True)
    flagged = sorted({q.feature for m in report.months for q in m.quality
                      if any(getattr(q, f"{k}_status") in ("watch", "alert") for k, _, _ in RATES)})
    caption = ("Look for a line that jumps: " + (", ".join(flagged) + " are flagged in some month."
                                                 if flagged else "no rate is flagged."))
    numbers = table(["month", "characteristic", "missing", "change", "unseen", "change", "catch-all", "change",
                     "status"],
                    [[m.month, q.feature, percent(q.missing_rate, 2), percent(q.missing_rate_change, 2, signed=True),
                      percent(q.unseen_rate, 2), percent(q.unseen_rate_change, 2, signed=True),
                      percent(q.catch_all_share, 2), percent(q.catch_all_share_change, 2, signed=True),
                      status_cell(q.status)]
                     for m in report.months for q in m.quality if q.status in ("watch", "alert")]
                    or [["every month", "every characteristic", DASH, DASH, DASH, DASH, DASH, DASH, status_cell("ok")]],
                    [False, False] + [True] * 6 + [False])
    note = paragraph("The table lists the months and characteristics on watch or alert; every figure is in the "
                     "run's JSON (--json).", class_="note")
    return figure(svg, caption, join([note, numbers]))


# ---------------------------------------------------------------- 9 settings

def _settings(report: MonitorReport) -> Section:
    rows = [[key, number(v.get("watch"), 3) if isinstance(v, dict) else str(v),
             number(v.get("alert"), 3) if isinstance(v, dict) else ""] for key, v in sorted(report.thresholds.items())]
    return Section("Thresholds used", (table(["figure", "watch", "alert"], rows),),
                   "A figure is watch at or past its watch level and alert at or past its alert level "
                   "(calibration p-values: at or below).", "thresholds")
