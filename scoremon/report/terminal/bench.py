"""The terminal view of ``scoremon bench``: progress while it runs, one line per comparison."""
from __future__ import annotations

from contextlib import contextmanager

from rich.table import Table

from . import err, out, progress_bar

RATIO_NOTE = ("ratio: median of the per-round ratios; each round runs both sides back to back, "
              "alternating which goes first. Only ratios from one run compare; absolute times do not.")


def _value(value: float, unit: str) -> str:
    return f"{value:.2f} GiB" if unit == "GiB" else f"{value:.3f} s"


def _verdict(line) -> str:
    if line.goal_met is None:
        return "[dim]info[/dim]"
    return "[green]met[/green]" if line.goal_met else "[red]missed[/red]"


def line_text(line) -> str:
    """One comparison as one line of plain words (rich markup for the verdict)."""
    if line.unit == "GiB":
        measured = f"{line.first_label} {_value(line.first_value, line.unit)}"
        shown = f"{line.ratio:.2f} GiB"
    else:
        measured = (f"{line.first_label} {_value(line.first_value, line.unit)} ÷ "
                    f"{line.second_label} {_value(line.second_value, line.unit)}")
        shown = f"ratio {line.ratio:.2f}"
    goal = f"goal {line.goal.text}" if line.goal else "no goal"
    detail = f" ({line.detail})" if line.detail else ""
    return f"({line.key}) {line.title}: {measured}{detail} → {shown}, {goal}: {_verdict(line)}"


class TerminalObserver:
    """Shows each stage as a progress bar on standard error and each result as it arrives."""

    def stage(self, description: str):
        return _stage(description)

    def measured(self, line) -> None:
        err.print(line_text(line), soft_wrap=True, highlight=False)


@contextmanager
def _stage(description: str):
    with progress_bar(description) as progress:
        yield progress


def print_bench_report(report) -> None:
    """The final table: both measurements, the ratio, the goal and met/missed per line."""
    out.print(f"scoremon bench: {report.rows:,} rows, DuckDB threads {report.threads}, "
              f"{report.repeat} rounds per comparison", soft_wrap=True)
    table = Table(show_edge=False, pad_edge=False)
    for name, justify in (("", "left"), ("comparison", "left"), ("first", "right"), ("second", "right"),
                          ("ratio", "right"), ("goal", "right"), ("", "left")):
        table.add_column(name, justify=justify, no_wrap=name != "comparison")
    for line in report.lines:
        second = "" if line.unit == "GiB" else _value(line.second_value, line.unit)
        ratio = f"{line.ratio:.2f} GiB" if line.unit == "GiB" else f"{line.ratio:.2f}"
        table.add_row(f"({line.key})", line.title, _value(line.first_value, line.unit), second, ratio,
                      line.goal.text if line.goal else "—", _verdict(line))
    out.print(table)
    for line in report.lines:
        if line.detail:
            out.print(f"({line.key}) {line.detail}", soft_wrap=True, markup=False)
    for note in report.notes:
        out.print(note, soft_wrap=True, markup=False)
    out.print(f"[dim]{RATIO_NOTE}[/dim]", soft_wrap=True)
