"""The terminal view of `scoremon bin`: one line per characteristic, sorted by IV, in 80 columns."""
from __future__ import annotations

import textwrap

from rich.markup import escape
from rich.table import Table

from . import out, print_cautions

STRONG, WEAK = 0.5, 0.02  # IV above 0.5: possible leakage; below 0.02: little evidence (common practice)
NAME_WIDTH = 22


def iv_warning(iv: float) -> str | None:
    if iv > STRONG:
        return "IV > 0.5: possible leakage"
    if iv < WEAK:
        return "IV < 0.02: weak"
    return None


def _short(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


def _say(text: str) -> None:
    # wrapped here rather than by rich, which pads wrapped lines with trailing blanks
    for line in textwrap.wrap(text, width=max(40, min(out.width, 100)), subsequent_indent="  ",
                              break_on_hyphens=False):
        out.print(escape(line), soft_wrap=True)


def print_bin_report(report, written: str) -> None:
    """The summary of a :class:`~scoremon.develop.binning.BinReport` written to ``written``."""
    b = report.binning
    s = b.settings
    verb = f"recounted {report.recounted_from}" if report.recounted_from else "binned"
    _say(f"{verb}: table {b.table} on {b.engine}, {b.rows:,} rows, {b.events:,} events ({b.events / b.rows:.2%})"
         + (f", months {b.months[0]} to {b.months[1]}" if b.months else ""))
    if not report.recounted_from:
        _say(f"settings: {s.fine_classes} fine classes, bins of at least {s.min_share:.0%} of rows and "
             f"{s.min_events} events, at most {s.max_bins} bins, WoE trend {s.trend}")
    out.print()
    table = Table(show_edge=False, pad_edge=False, box=None, header_style="bold", padding=(0, 1))
    table.add_column("characteristic", max_width=NAME_WIDTH, no_wrap=True)
    table.add_column("type", no_wrap=True)
    table.add_column("IV", justify="right", no_wrap=True)
    table.add_column("bins", justify="right", no_wrap=True)
    table.add_column("note", overflow="fold")
    for binned in sorted(b.features, key=lambda f: -f.iv):
        feature = binned.feature
        bins = len(binned.inner_counts)
        notes = [n for n in (iv_warning(binned.iv),) if n] + list(report.notes.get(binned.name, ()))
        table.add_row(escape(_short(binned.name, NAME_WIDTH)), feature.type[:3], f"{binned.iv:.3f}", str(bins),
                      escape("; ".join(notes)))
    for name, notes in report.notes.items():
        if not any(f.name == name for f in b.features):
            table.add_row(escape(_short(name, NAME_WIDTH)), "", "", "", escape("; ".join(notes)))
    for name, why in report.left_out:
        table.add_row(escape(_short(name, NAME_WIDTH)), "", "", "", escape(f"not binned: {why}"))
    out.print(table)
    out.print()
    _say(f"wrote {written} (fingerprint {b.fingerprint})")
    _say(f"edit it by hand, then recount it: scoremon bin --recount {written} --db … --out NEW.yaml")
    print_cautions()
