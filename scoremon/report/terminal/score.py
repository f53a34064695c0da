"""The terminal view of a scoring run."""
from __future__ import annotations

from rich.markup import escape
from rich.table import Table

from . import out


def grade_table(counts: dict[str, int], title: str | None = None) -> Table:
    """Rows, share and a bar per grade (a title, when given, is padded to the table's width)."""
    total = sum(counts.values()) or 1
    table = Table(title=title, title_justify="left", show_edge=False, pad_edge=False)
    table.add_column("grade")
    table.add_column("rows", justify="right")
    table.add_column("share", justify="right")
    table.add_column("", min_width=10, max_width=30)
    widest = max(counts.values(), default=1) or 1
    for grade, rows in counts.items():
        bar = "#" * max(1, round(20 * rows / widest)) if rows else ""
        table.add_row(grade, f"{rows:,}", f"{rows / total:6.1%}", bar)
    return table


def print_score_result(result) -> None:
    out.print(escape(f"scored {result.rows:,} rows into {result.target} in {result.seconds:.2f} s"))
    out.print(escape(f"model {result.model_name} version {result.model_version}, "
                     f"fingerprint {result.model_fingerprint}"))
    if result.pd_source:
        out.print(escape(f"pd: {result.pd_source} (the spec's scaling.pd_from)"))
    out.print()
    out.print(grade_table(result.grade_counts))
    out.print()
