"""The terminal view of `scoremon fit`: the data, one line per characteristic, discrimination,
the λ path and the warnings, in 80 columns."""
from __future__ import annotations

import math
import textwrap

from rich.markup import escape
from rich.table import Table

from . import out, print_cautions

NAME_WIDTH = 20


def _say(text: str, indent: str = "  ") -> None:
    # wrapped here rather than by rich, which pads wrapped lines with trailing blanks
    for line in textwrap.wrap(text, width=max(40, min(out.width, 100)), subsequent_indent=indent,
                              break_on_hyphens=False):
        out.print(escape(line), soft_wrap=True)


def _number(value: float | None, digits: int = 3) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    return f"{value:.{digits}f}"


def _p(value: float | None) -> str:
    if value is None:
        return "–"
    return "<0.001" if value < 0.001 else f"{value:.3f}"


def _short(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


def _table() -> Table:
    return Table(show_edge=False, pad_edge=False, box=None, header_style="bold", padding=(0, 1))


def print_fit_report(report) -> None:
    """The summary of a :class:`~scoremon.develop.records.FitReport`."""
    s = report.settings
    _say(f"fitted: table {report.table} on {report.engine}, {report.rows:,} rows, {report.events:,} events "
         f"({report.events / report.rows:.2%}); binning file {report.binning_file or '?'} "
         f"({report.binning_fingerprint})")
    penalty = "no penalty" if s.penalty == "none" else f"penalty {s.penalty} (α = {s.alpha:g})"
    cv = f"{s.folds}-fold cross-validation by {s.cv_metric}" + (", one-standard-error rule" if s.one_se else "") \
        if s.folds > 1 else "no cross-validation"
    _say(f"settings: {penalty}, {cv}; selection: IV ≥ {s.min_iv:g}, |WoE correlation| ≤ {s.max_correlation:g}; "
         f"{report.passes} passes over the rows")
    out.print()
    table = _table()
    table.add_column("characteristic", max_width=NAME_WIDTH, no_wrap=True)
    for name in ("IV", "coef", "unpen.", "SE", "z", "p", "VIF"):
        table.add_column(name, justify="right", no_wrap=True)
    table.add_row("(intercept)", "", _number(report.intercept), _number(report.intercept_unpenalised),
                  _number(report.intercept_standard_error), "", "", "")
    for c in report.characteristics:
        table.add_row(escape(_short(c.name, NAME_WIDTH)), _number(c.iv), _number(c.coefficient), _number(c.unpenalised),
                      _number(c.standard_error), _number(c.wald_z, 2), _p(c.p_value), _number(c.vif, 2))
    out.print(table)
    if report.left_out:
        out.print()
        _say("left out: " + "; ".join(f"{left.name} ({left.reason})" for left in report.left_out))
    d = report.discrimination
    out.print()
    line = f"development rows: Gini {d.gini:.3f}, KS {d.ks:.3f}"
    if d.cv_gini_mean is not None:
        line += (f"; cross-validated: Gini {d.cv_gini_mean:.3f} ± {_number(d.cv_gini_sd)}, "
                 f"KS {d.cv_ks_mean:.3f} ± {_number(d.cv_ks_sd)}")
    _say(line)
    if report.path:
        out.print()
        _say(f"λ path from λ_max {report.lambda_max:.4g}: chosen λ {report.chosen_lambda:.4g}"
             + (f" (best mean {report.best_lambda:.4g})" if report.best_lambda != report.chosen_lambda else ""))
        path = _table()
        for name in ("λ", "in", f"CV {s.cv_metric}", "± sd", ""):
            path.add_column(name, justify="right", no_wrap=True)
        for step in report.path:
            mark = "chosen" if step.lam == report.chosen_lambda else ("best" if step.lam == report.best_lambda else "")
            path.add_row(f"{step.lam:.4g}", str(step.nonzero), _number(step.cv_mean, 4), _number(step.cv_sd, 4),
                         mark if step.status == "converged" else f"{mark} {step.status}".strip())
        out.print(path)
    if report.warnings:
        out.print()
        out.print("[bold]warnings[/bold]")
        for warning in report.warnings:
            _say(f"- {warning}")
    out.print()
    if report.spec_file:
        _say(f"wrote {report.spec_file} (fingerprint {report.spec_fingerprint})")
    print_cautions()
