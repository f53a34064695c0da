"""The terminal view of ``scoremon demo``: a title, one block per step, a wrap-up, the cautions.

The demo prints as it goes: each step's block appears when the step ends, so a long build
or scoring run shows its progress bar first and its result after. Everything here takes
plain values; nothing computes. Text is wrapped here (not by rich's padding, which fills
every line with spaces to the terminal's width) so that copied output has no trailing blanks.
"""
from __future__ import annotations

import textwrap
from typing import Sequence

from rich.padding import Padding
from rich.table import Table
from rich.text import Text

from . import out, print_cautions
from .score import grade_table

DETAIL_INDENT = 4


def print_title(what: str) -> None:
    """The demo's first line, then a blank line."""
    out.print(Text.assemble(("scoremon demo", "bold"), f": {what}"), soft_wrap=False)
    out.print()


def print_step(number: int, name: str, seconds: float, lines: Sequence[str] = ()) -> None:
    """A step's heading (number, name, time taken) and its result lines, indented and wrapped.

    Steps after the first start with a blank line, so each step reads as one block.
    """
    if number > 1:
        out.print()
    heading = Table.grid(expand=True, padding=(0, 1))
    heading.add_column(width=DETAIL_INDENT - 1, justify="right")
    heading.add_column(ratio=1)
    heading.add_column(justify="right")
    heading.add_row(Text(str(number), style="bold"), Text(name, style="bold"), Text(f"{seconds:.1f} s", style="dim"))
    out.print(heading)
    for line in lines:
        _print_wrapped(line, " " * DETAIL_INDENT)


def print_planted(title: str, planted: Sequence[tuple[str, str]]) -> None:
    """What the demo data hides for monitoring to find: (when, what) pairs under a title."""
    _print_wrapped(title, " " * DETAIL_INDENT)
    when_width = max((len(when) for when, _ in planted), default=0)
    for when, what in planted:
        first = " " * (DETAIL_INDENT + 2) + when.ljust(when_width) + "  "
        _print_wrapped(what, first, " " * len(first), style_of_first=(len(first) - 2 - when_width, when_width))


def print_grades(counts: dict[str, int]) -> None:
    """Rows per grade with shares and bars, indented under the step that scored them."""
    out.print()
    out.print(Padding(grade_table(counts, title="rows by grade"), (0, 0, 0, DETAIL_INDENT), expand=False))


def print_wrap_up(facts: Sequence[tuple[str, str]], seconds: Sequence[tuple[str, float]]) -> None:
    """Where things are (name, value pairs), the time per step and in all, then the cautions."""
    total = sum(s for _, s in seconds)
    timing = " · ".join(f"{name} {s:.1f} s" for name, s in seconds)
    rows = list(facts) + [("time", f"{timing} · total {total:.1f} s" if len(seconds) > 1 else f"{total:.1f} s")]
    name_width = max(len(name) for name, _ in rows)
    out.print()
    for name, value in rows:
        first = name.ljust(name_width) + "  "
        _print_wrapped(value, first, " " * len(first), style_of_first=(0, len(name)), bold=True)
    out.print()
    print_cautions()


def _print_wrapped(text: str, first: str, later: str | None = None,
                   style_of_first: tuple[int, int] | None = None, bold: bool = False) -> None:
    """``text`` wrapped to the terminal's width; ``first``/``later`` start the first/other lines.

    ``style_of_first`` (start, length) marks a label inside ``first`` to show bold (or cyan).
    A word longer than a line (a path) is left whole, so it can be copied.
    """
    later = first if later is None else later
    width = max(out.width, len(first) + 20)
    lines = textwrap.wrap(text, width=width, initial_indent=first, subsequent_indent=later,
                          break_on_hyphens=False, break_long_words=False) or [first.rstrip()]
    for number, line in enumerate(lines):
        rendered = Text(line)
        if number == 0 and style_of_first is not None:
            start, length = style_of_first
            rendered.stylize("bold" if bold else "cyan", start, start + length)
        out.print(rendered, soft_wrap=True)
