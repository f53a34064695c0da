"""The terminal view of ``scoremon monitor``: who and against what, one line per month, the
characteristics that drift, what drives the score shift, data-quality findings, calibration
by grade for the latest mature month, notes and the cautions.

Reads well at 80 columns; from 90 columns the month table adds the data-quality status, and
from 110 the mean score shift, events against PD and the AUC. Every figure is in the JSON
(``--json``).
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
    _months(view, report)
    out.print()
    _drifts(view, report)
    _drivers(view, report)
    _findings(view, report)
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


def _back_test(month) -> Text:
    """Calibration and discrimination status side by side, or why there are none."""
    if month.maturity == "immature":
        return _status("immature")
    if month.calibration is None:
        return _status("no outcome" if month.rows else None)
    return Text.assemble(_status(month.calibration_status), " ", _status(month.discrimination_status))


def _months(view: Indented, report) -> None:
    width = view.width
    roomy, wide = width >= ROOMY, width >= WIDE
    rows_width = max([len(f"{m.rows:,}") for m in report.months] + [4])
    columns = [("month", "left", 7), ("rows", "right", rows_width), ("vol.", "right", 5), ("PSI", "right", 5),
               ("worst characteristic", "left"), ("PSI", "right", 5)] + ([("DQ", "left", 5)] if roomy else []) + \
              [("calib discr", "left", 11)]
    if wide:
        columns[4:4] = [("Δ score", "right", 7)]
        columns += [("events / PD", "right", 13), ("AUC", "right", 5)]
    columns.append(("status", "left", 6))
    table = _table(view, *columns)
    for m in report.months:
        psi = Text(_number(m.score_psi), style=STATUS_STYLE.get(m.score_psi_status or "", ""))
        top = m.worst_characteristic
        name = Text("–" if top is None else top.feature)
        top_psi = Text("–") if top is None else Text(_number(top.psi), style=STATUS_STYLE.get(top.status or "", ""))
        cells = [m.month, f"{m.rows:,}", Text(_signed_pct(m.volume_change), style=STATUS_STYLE.get(m.volume_status or "", "")),
                 psi, name, top_psi] + ([_status(m.data_quality_status)] if roomy else []) + [_back_test(m)]
        if wide:
            cells[4:4] = [_points(m.mean_score_shift)]
            calibration = m.calibration
            ratio = "–" if calibration is None or calibration.event_rate is None else \
                f"{_pct(calibration.event_rate)} / {_pct(calibration.mean_pd)}"
            auc = "–" if m.discrimination is None else _number(m.discrimination.auc)
            cells += [ratio, auc]
        cells.append(_status(m.status))
        table.add_row(*cells)
    view.emit(table)
    view.emit(Text("PSI: score bands, then the worst characteristic; " + ("DQ: data quality; " if roomy else "")
               + "calib discr: calibration and discrimination, on mature months; status: the worst of all",
               style="dim"))


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
    lines = []
    for m in report.months:
        if m.volume_status in ("watch", "alert"):
            lines.append((m.month, "volume", f"{m.rows:,} rows", _signed_pct(m.volume_change), m.volume_status))
        for q in m.quality:
            for figure, words in (("missing_rate", "missing"), ("unseen_rate", "unseen categories"),
                                  ("catch_all_share", "catch-all bin")):
                status = getattr(q, f"{figure}_status")
                if status in ("watch", "alert"):
                    change = getattr(q, f"{figure}_change")
                    lines.append((m.month, f"{q.feature} {words}", _pct(getattr(q, figure)),
                                  f"{change * 100:+.1f} pts".replace("-", "−"), status))
    if not lines:
        view.emit(Text.assemble(("data quality", "bold"), "  no finding past its thresholds"), 0)
        out.print()
        return
    view.emit(Text(f"data quality findings ({len(lines)})", style="bold"), 0)
    table = _table(view, ("month", "left", 7), ("what", "left"), ("now", "right", 7), ("change", "right", 10),
                   ("status", "left", 6))
    for month, what, now, change, status in lines[:MOST_FINDINGS]:
        table.add_row(month, what, now, change, _status(status))
    view.emit(table)
    if len(lines) > MOST_FINDINGS:
        view.emit(Text(f"… and {len(lines) - MOST_FINDINGS} more (every figure is in --json)", style="dim"))
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
