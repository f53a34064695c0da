"""Terminal output: the only package that imports rich.

Everything here takes a result record and prints it; nothing computes. Output fits an
80-column terminal and uses a wider one when there is one. This module holds the consoles
and what every command shares; each command's own view is a module beside it
(``score``, later ``monitor`` and ``diff``).
"""
from __future__ import annotations

import textwrap
from contextlib import contextmanager
from typing import Iterator

from rich.console import Console
from rich.markup import escape
from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn
from rich.text import Text

from ..cautions import CAUTIONS

out = Console(highlight=False, soft_wrap=False)
err = Console(stderr=True, highlight=False)


INDENT = 2  # a block's own indent inside a view


class Indented:
    """Prints blocks ``base`` columns in (a view nested under a step of the demo is), wrapped to
    the terminal's width and without trailing blanks."""

    def __init__(self, base: int = 0):
        self.base = base

    @property
    def width(self) -> int:
        """The columns the view has: the terminal's, less its base indent."""
        return out.width - self.base

    def emit(self, renderable, extra: int = INDENT) -> None:
        """Print ``renderable`` ``extra`` columns past the base, without trailing blanks (rich pads
        table cells and padded blocks with spaces; copied output should not carry them)."""
        indent = self.base + extra
        options = out.options.update(width=max(out.width - indent, 40))
        for line in out.render_lines(renderable, options, pad=False):
            text = Text.assemble(*[(segment.text, segment.style) for segment in line if not segment.control])
            text.rstrip()
            out.print(Text(" " * indent) + text if text.plain else text, no_wrap=True, crop=False, soft_wrap=True)


def print_problems(lines: list[str]) -> None:
    """One line per problem, on standard error, no traceback."""
    for line in lines:
        err.print(line, markup=False, soft_wrap=True)


def print_text(text: str) -> None:
    out.print(text, markup=False, soft_wrap=True)


def print_check_ok(path: str, spec, fingerprint: str) -> None:
    m = spec.model
    out.print("[green]ok[/green] " + escape(f"{path}: {m.name} version {m.version}, {len(spec.features)} features, "
                                            f"{len(spec.grades)} grades, rounding {spec.scaling.rounding}, "
                                            f"{spec.scaling.reported_pd_words}, fingerprint {fingerprint}"), soft_wrap=True)


@contextmanager
def progress_bar(description: str) -> Iterator:
    """A progress bar on standard error; yields a callback taking the share done (0 to 1)."""
    if not err.is_terminal:
        yield None
        return
    with Progress(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.percentage:>3.0f}%"),
                  TimeElapsedColumn(), console=err, transient=True) as bar:
        task = bar.add_task(description, total=1.0)
        yield lambda share: bar.update(task, completed=share)


def print_cautions() -> None:
    # wrapped here rather than by rich, which pads wrapped lines with trailing blanks
    for line in textwrap.wrap(CAUTIONS, width=max(40, min(out.width, 100))):
        out.print(f"[dim]{escape(line)}[/dim]")
