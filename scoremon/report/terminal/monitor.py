"""The terminal view of ``scoremon monitor``: who and against what, the characteristics that
drift, one line per month saying what put it on watch or alert (each family with its worst
figure), the findings grouped into month ranges, what drives the score shift, calibration by
grade for the latest mature month, notes and the cautions.

Reads well at 80 columns; from 90 columns the month table adds the volume change and the score
PSI, and from 110 the mean score shift, events against PD and the AUC. Every figure is in the
JSON (``--json``).
"""
from __future__ import annotations

from rich.table import Table
from rich.text import Text

from ..cautions import CAUTIONS
from . import INDENT, Indented, out, print_cautions

STATUS_STYLE = {"ok": "green", "watch": "yellow", "alert": "bold red", "immature": "dim", "no outcome": "dim"}
ROOMY, WIDE = 90, 110
MOST_FINDINGS = 12


def _table(view: Indented, *columns: tuple) -> Table:
    """A borderless table; a column is (header, justify) or (header, justify, minimum width).

    Columns with a minimum width keep it; the others share what is left and are cut with an
    ellipsis, so a narrow terminal loses the end of a name, never a number.
    """
    table = Table(show_edge=False, pad_edge=False, box=None, header_style="bold", padding=(0, 1))
    fixed = sum(c[2] for c in columns if len(c) > 2) + 2 * (len(columns) - 1)
    flexible = sum(1 for c in columns if len(c) == 2)
    room = max((view.width - INDENT - fixed) // max(flexible, 1), 4)
    for name, justify, *width in columns:
        if width:
            table.add_column(name, justify=justify, no_wrap=True, min_width=width[0])
        else:
            table.add_column(name, justify=justify, overflow="ellipsis", no_wrap=True, max_width=room)
    return table


def _status(value: str | None) -> Text:
    return Text(value or "–", style=STATUS_STYLE.get(value or "", "dim"))


def _pct(share: float | None, digits: int = 1) -> str:
    return "–" if share is None else f"{share:.{digits}%}"


def _signed_pct(change: float | None, digits: int = 0) -> str:
    if change is None:
        return "–"
    text = f"{change:+.{digits}%}"
    return text.replace("-", "−")


def _number(value: float | None, digits: int = 3) -> str:
    return "–" if value is None else f"{value:.{digits}f}".replace("-", "−")


def _p(value: float | None) -> str:
    if value is None:
        return "–"
    return "<0.001" if value < 0.001 else f"{value:.3f}"


def _points(value: float | None) -> str:
    return "–" if value is None else f"{value:+.1f}".replace("-", "−")


def print_monitor_report(report, history_written: bool = True, indent: int = 0) -> None:
    """Print a :class:`~scoremon.monitor.records.MonitorReport`, every line ``indent`` columns in."""
    view = Indented(indent)
    _header(view, report, history_written)
    out.print()
    _drifts(view, report)
    _months(view, report)
    out.print()
    _findings(view, report)
    _drivers(view, report)
    _calibration(view, report)
    if report.notes:
        view.emit(Text("notes", style="bold"), 0)
        for note in report.notes:
            view.emit(Text(f"- {note}", style="dim"))
        out.print()
    if indent:
        view.emit(Text(CAUTIONS, style="dim"), 0)
    else:
        print_cautions()


def _header(view: Indented, report, history_written: bool) -> None:
    view.emit(Text.assemble(("monitor", "bold"), f"  {report.model_name} version {report.model_version}, "
                        f"fingerprint {report.model_fingerprint}"), 0)
    facts = Table.grid(padding=(0, 2))
    facts.add_column(style="bold")
    facts.add_column(overflow="fold")
    facts.add_row("book", f"{report.source}; as of {report.as_of}, outcomes mature after "
                          f"{report.performance_window_months} months")
    expected = "" if report.expected_monthly_rows is None else f", {report.expected_monthly_rows:,.0f} rows a month"
    facts.add_row("baseline", f"{report.baseline_source}: {report.baseline_rows:,} rows{expected}")
    if report.volume_rule:
        facts.add_row("volume", report.volume_rule)
    sides = ("one-sided: only more events than the PD predicts is flagged, so an over-estimating model reads "
             "ok (--two-sided tests both ways)") if report.calibration_test == "one-sided" else \
        "two-sided: events far above or far below the PD are flagged"
    facts.add_row("calibration", f"Jeffreys and binomial tests {sides}")
    alerts = sum(1 for m in report.months if m.status == "alert")
    watches = sum(1 for m in report.months if m.status == "watch")
    verdict = Text.assemble(_status(report.status), f"  {len(report.months)} months: {alerts} on alert, "
                            f"{watches} on watch, {len(report.months) - alerts - watches} ok")
    if report.rows_out_of_range:
        verdict.append(f"; {report.rows_out_of_range:,} row{'s' if report.rows_out_of_range > 1 else ''} out of "
                       "range (see notes)")
    facts.add_row("status", verdict)
    run = f"run {report.run_id[:12]}" + (" appended to the history" if history_written else " (history not written)")
    facts.add_row("history", run)
    view.emit(facts)


def _months(view: Indented, report) -> None:
    """One row per month; the last column says what put the month on watch or alert."""
    width = view.width
    roomy, wide = width >= ROOMY, width >= WIDE
    rows_width = max([len(f"{m.rows:,}") for m in report.months] + [4])
    columns = [("month", "left", 7), ("rows", "right", rows_width)]
    if roomy:
        columns += [("vol.", "right", 5), ("PSI", "right", 5)]
    if wide:
        columns += [("Δ score", "right", 7), ("events / PD", "right", 13), ("AUC", "right", 5)]
    columns += [("status", "left", 8)]
    table = _table(view, *columns)
    table.add_column("why: family and its worst figure", justify="left", overflow="fold")
    for m in report.months:
        cells = [m.month, f"{m.rows:,}"]
        if roomy:
            cells += [Text(_signed_pct(m.volume_change), style=STATUS_STYLE.get(m.volume_status or "", "")),
                      Text(_number(m.score_psi), style=STATUS_STYLE.get(m.score_psi_status or "", ""))]
        if wide:
            calibration = m.calibration
            ratio = "–" if calibration is None or calibration.event_rate is None else \
                f"{_pct(calibration.event_rate)} / {_pct(calibration.mean_pd)}"
            cells += [_points(m.mean_score_shift), ratio, "–" if m.discrimination is None else _number(m.discrimination.auc)]
        cells += [_status(m.status), _why(m)]
        table.add_row(*cells)
    view.emit(table)
    view.emit(Text("why: per family on watch or alert, its worst figure, drifting characteristics first; "
               "immature: outcomes not known yet, so no calibration or discrimination"
               + ("; vol.: rows against the expected rows; PSI: score bands" if roomy else ""), style="dim"))


FAMILY_ORDER = ("stability", "data quality", "calibration", "discrimination")


def _month_findings(m) -> list[tuple[str, str, str, float, str]]:
    """Every figure of month ``m`` on watch or alert: (family, what, figure, size, status).

    ``what`` names the finding the same way every month (so repeats group into ranges);
    ``size`` orders findings of one family, largest first.
    """
    found = []

    def add(family, what, figure, size, status):
        if status in ("watch", "alert"):
            found.append((family, what, figure, abs(size or 0.0), status))

    for c in m.characteristics:
        add("stability", f"{c.feature} PSI", _number(c.psi), c.psi, c.status)
    add("stability", "score PSI", _number(m.score_psi), m.score_psi, m.score_psi_status)
    if not m.rows:
        add("data quality", "no rows", "", 1.0, m.volume_status)
    else:
        add("data quality", "volume", _signed_pct(m.volume_change), m.volume_change, m.volume_status)
    for q in m.quality:
        for figure, words in (("missing_rate", "missing"), ("unseen_rate", "unseen"), ("catch_all_share", "catch-all")):
            change = getattr(q, f"{figure}_change")
            add("data quality", f"{q.feature} {words}",
                f"{_pct(getattr(q, figure))} ({change * 100:+.1f} pts)".replace("-", "−") if change is not None else "–",
                change, getattr(q, f"{figure}_status"))
    c = m.calibration
    if c is not None:
        add("calibration", "events", f"{_pct(c.event_rate)} vs PD {_pct(c.mean_pd)}",
            1.0 - (c.jeffreys_p or 0.0), worst_of(c.status, None))
        add("calibration", "grade chi-square", f"p {_p(c.chi_square_p)}", 1.0 - (c.chi_square_p or 0.0),
            c.chi_square_status if c.chi_square_status == "alert" else None)
    d = m.discrimination
    if d is not None:
        add("discrimination", "AUC change", _number(d.auc_change), d.auc_change, d.status)
    found.sort(key=lambda f: (FAMILY_ORDER.index(f[0]), -STATUS_RANK[f[4]], -f[3]))
    return found


STATUS_RANK = {"watch": 1, "alert": 2}


def worst_of(*statuses):
    flagged = [s for s in statuses if s in STATUS_RANK]
    return max(flagged, key=STATUS_RANK.get) if flagged else None


def _why(m) -> Text:
    """Each family on watch or alert with its worst figure, in :data:`FAMILY_ORDER`."""
    parts, seen = [], set()
    for family, what, figure, _, status in _month_findings(m):
        if family in seen:
            continue
        seen.add(family)
        if parts:
            parts.append("; ")
        parts.append((f"{family}: {what} {figure}".rstrip(), STATUS_STYLE[status]))
    if m.maturity == "immature" and m.rows:
        parts.append(("; immature" if parts else "immature", "dim"))
    return Text.assemble(*parts) if parts else Text("–", style="dim")


def _drifts(view: Indented, report) -> None:
    flagged = [d for d in report.drifts if d.status in ("watch", "alert")]
    if not flagged:
        if report.drifts:
            top = report.drifts[0]
            view.emit(Text.assemble(("characteristics", "bold"), f"  none drifts past its thresholds; the largest PSI is "
                                f"{top.feature} {_number(top.worst_psi)} in {top.worst_month}"), 0)
            out.print()
        return
    view.emit(Text(f"characteristics that drift, ranked ({len(flagged)})", style="bold"), 0)
    table = _table(view, ("characteristic", "left"), ("worst", "left", 7), ("PSI", "right", 5), ("months", "right", 6),
                   ("latest", "right", 6), ("points", "right", 6), ("status", "left", 6))
    for d in flagged:
        table.add_row(d.feature, d.worst_month, _number(d.worst_psi), str(d.months_flagged), _number(d.latest_psi),
                      _points(d.latest_points_shift), _status(d.status))
    view.emit(table)
    view.emit(Text("worst: the month of its highest PSI; months: months on watch or alert; latest: its PSI in the "
               "latest month, and the points it moves the mean score by", style="dim"))
    out.print()


def _drivers(view: Indented, report) -> None:
    measured = [m for m in report.months if m.rows and m.mean_score_shift is not None]
    if not measured:
        return
    latest = measured[-1]
    shifts = [c for c in latest.characteristics if c.points_shift is not None]
    shifts.sort(key=lambda c: -abs(c.points_shift))
    view.emit(Text.assemble((f"score shift in {latest.month}", "bold"),
                        f"  mean score {_points(latest.mean_score_shift)} points against the baseline; "
                        "by characteristic, Σ(actual% − expected%)·points:"), 0)
    table = _table(view, ("characteristic", "left"), ("points", "right", 7), ("PSI", "right", 5))
    for c in shifts[:5]:
        table.add_row(c.feature, _points(c.points_shift), _number(c.psi))
    view.emit(table)
    out.print()


def _findings(view: Indented, report) -> None:
    """Every finding, a run of consecutive months with the same finding on one line (its range,
    its worst figure and status), drifting characteristics first."""
    runs: list[dict] = []
    open_runs: dict[tuple, dict] = {}
    for position, m in enumerate(report.months):
        for family, what, figure, size, status in _month_findings(m):
            key = (family, what)
            run = open_runs.get(key)
            if run is None or run["last_position"] != position - 1:
                run = {"family": family, "what": what, "first": m.month, "last": m.month, "figure": figure,
                       "size": size, "status": status, "months": 0, "last_position": position}
                runs.append(run)
                open_runs[key] = run
            run.update(last=m.month, last_position=position, months=run["months"] + 1)
            if (STATUS_RANK[status], size) > (STATUS_RANK[run["status"]], run["size"]):
                run.update(figure=figure, size=size, status=status)
    if not runs:
        view.emit(Text.assemble(("findings", "bold"), "  none past its thresholds"), 0)
        out.print()
        return
    runs.sort(key=lambda r: (FAMILY_ORDER.index(r["family"]), r["first"], r["what"]))
    view.emit(Text(f"findings by month range ({len(runs)})", style="bold"), 0)
    figure_width = max(len(r["figure"]) for r in runs)
    # the family heads its rows rather than taking a column, so that the "what" column has the
    # room for a long characteristic name at 80 columns
    table = _table(view, ("months", "left", 15), ("what", "left"), ("worst", "right", figure_width),
                   ("status", "left", 6))
    what = table.columns[1]
    what.no_wrap, what.overflow = False, "fold"  # a name longer still wraps rather than losing its end
    family = None
    for r in runs[:MOST_FINDINGS]:
        if r["family"] != family:
            family = r["family"]
            table.add_row(Text(family, style="italic"), "", "", "")
        months = r["first"] if r["first"] == r["last"] else f"{r['first']}–{r['last']}"
        table.add_row(months, r["what"], r["figure"] or "–", _status(r["status"]))
    view.emit(table)
    if len(runs) > MOST_FINDINGS:
        view.emit(Text(f"… and {len(runs) - MOST_FINDINGS} more (every figure is in --json)", style="dim"))
    out.print()


def _calibration(view: Indented, report) -> None:
    month = report.latest_mature_month
    if month is None:
        return
    c = month.calibration
    view.emit(Text.assemble((f"calibration by grade, {month.month}", "bold"),
                        f" (latest mature month): {c.events:,} events in {c.rows:,} rows, "
                        f"{_pct(c.event_rate, 2)} against a mean PD of {_pct(c.mean_pd, 2)}"), 0)
    table = _table(view, ("grade", "left"), ("rows", "right", 7), ("events", "right", 6), ("mean PD", "right", 7),
                   ("realised", "right", 8), ("Jeffreys p", "right", 10), ("binomial p", "right", 10),
                   ("status", "left", 6))
    for g in c.grades:
        table.add_row(g.grade, f"{g.rows:,}", f"{g.events:,}", _pct(g.mean_pd, 2), _pct(g.event_rate, 2),
                      _p(g.jeffreys_p), _p(g.binomial_p), _status(g.status))
    view.emit(table)
    chi = "–" if c.chi_square is None else f"{c.chi_square:.2f} (df {c.chi_square_df}), p {_p(c.chi_square_p)}"
    if c.chi_square_status in ("watch", "alert"):
        chi += f" ({c.chi_square_status})"
    z = "–" if c.spiegelhalter_z is None else f"{_number(c.spiegelhalter_z, 2)}, p {_p(c.spiegelhalter_p)}"
    view.emit(Text(f"grade chi-square {chi}; Spiegelhalter z {z}; Brier {_number(c.brier, 4)}; "
               f"month Jeffreys p {_p(c.jeffreys_p)}"))
    d = month.discrimination
    if d is not None and d.auc is not None:
        interval = "" if d.auc_lower is None else f" (95% CI {d.auc_lower:.3f}–{d.auc_upper:.3f})"
        change = "" if d.auc_change is None else f", {_number(d.auc_change)} against the baseline"
        view.emit(Text(f"AUC {d.auc:.3f}{interval}{change}; Gini {d.gini:.3f}; KS {d.ks:.3f}"))
    out.print()


def print_baseline_written(path: str, baseline, fingerprint: str) -> None:
    """One paragraph on a baseline just written into a new spec file."""
    per_month = "" if baseline.rows_per_month is None else f" ({baseline.rows_per_month:,.0f} a month)"
    outcome = ""
    if baseline.event_rate is not None:
        auc = "–" if baseline.auc is None else f"{baseline.auc:.3f}"
        ks = "–" if baseline.ks is None else f"{baseline.ks:.3f}"
        outcome = f"; event rate {baseline.event_rate:.2%}, AUC {auc}, KS {ks}"
    out.print(f"wrote {path}: baseline from {baseline.computed_from or 'the development rows'}, "
              f"{baseline.rows:,} rows{per_month}{outcome}; {len(baseline.score_bands)} score bands, "
              f"{len(baseline.feature_shares)} features; fingerprint unchanged ({fingerprint})",
              soft_wrap=True, markup=False)
