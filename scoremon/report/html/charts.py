"""Charts as inline SVG: matplotlib draws, this module turns the drawing into page-ready SVG.

matplotlib is imported here, lazily (on the first chart), so that the command line starts
fast when no report is asked for. It renders through its SVG backend only (no raster
backend). Text is written as glyph outlines (``svg.fonttype: path``) in DejaVu Sans, the font
matplotlib ships, so the chart looks the same on every machine and the browser fetches no
font. :func:`svg_markup` then makes the SVG fit to sit beside others in one HTML page: the XML
prolog, DOCTYPE and metadata go (they name outside addresses), every ``id`` gets the chart's
own prefix (glyph and clip-path ids would otherwise clash between charts), and a reference to
anything outside the chart is refused as a bug.

The drawing helpers shared by the reports live here too: month axes, immature months hatched
and labelled, threshold lines labelled in words, bars with their values written on them.
"""
from __future__ import annotations

import io
import re
from contextlib import contextmanager
from typing import TYPE_CHECKING, Callable, Iterator, Sequence

from . import palette
from .page import Markup

if TYPE_CHECKING:  # for annotations only; the import itself is lazy
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

WIDTH = 8.0  # inches; the page column is about 10 in on screen and 7.1 in on A4, so text stays 8–11 pt
FONT_SIZE = 8.5
SCREEN_SCALE = 1.31  # a WIDTH-inch chart (768 px at 96 px an inch) fills the page's 1004 px column

STYLE = {
    "svg.fonttype": "path",
    "svg.hashsalt": "scoremon",  # ids from a fixed salt: the same report gives the same file
    "font.family": "DejaVu Sans",
    "font.size": FONT_SIZE,
    "axes.titlesize": FONT_SIZE + 0.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": FONT_SIZE,
    "axes.edgecolor": palette.MUTED,
    "axes.labelcolor": palette.INK,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.grid.axis": "y",
    "axes.axisbelow": True,
    "grid.color": palette.RULE,
    "grid.linewidth": 0.6,
    "xtick.color": palette.MUTED,
    "ytick.color": palette.MUTED,
    "xtick.labelcolor": palette.INK,
    "ytick.labelcolor": palette.INK,
    "xtick.labelsize": FONT_SIZE - 0.5,
    "ytick.labelsize": FONT_SIZE - 0.5,
    "legend.fontsize": FONT_SIZE - 0.5,
    "legend.frameon": False,
    "lines.linewidth": 1.6,
    "lines.markersize": 4.5,
    "hatch.color": "#8a8f98",
    "hatch.linewidth": 0.6,
    "figure.facecolor": palette.PAPER,
    "text.color": palette.INK,
}

_PROLOG = re.compile(r"<\?xml[^>]*\?>\s*|<!DOCTYPE[^>]*>\s*", re.S)
_METADATA = re.compile(r"<metadata>.*?</metadata>\s*", re.S)
_NAMESPACES = re.compile(r'\s+xmlns(:\w+)?="[^"]*"')
_SIZE = re.compile(r'<svg([^>]*?)\swidth="([\d.]+)pt"\s+height="([\d.]+)pt"')
_REFERENCE = re.compile(r'(\bid="|href="#|url\(#)([^")]+)')
_OUTSIDE = re.compile(r'href="(?!#)|url\((?!#)|https?:|//[a-z0-9]', re.I)


@contextmanager
def drawing(height: float, width: float = WIDTH, rows: int = 1, columns: int = 1, fixed_layout: bool = False,
            **grid) -> Iterator[tuple["Figure", "Axes | Sequence[Axes]"]]:
    """A figure in the reports' style with ``rows`` × ``columns`` axes (one Axes when 1 × 1).

    Axes are placed by matplotlib's constrained layout, which makes room for every label;
    ``fixed_layout`` leaves the placing to ``paint`` (``subplots_adjust``): for small multiples,
    where measuring every panel's labels twice would cost more than the rest of a report."""
    import matplotlib
    from matplotlib.figure import Figure

    with matplotlib.rc_context(STYLE):
        figure = Figure(figsize=(width, height), layout=None if fixed_layout else "constrained")
        axes = figure.subplots(rows, columns, squeeze=True, **grid)
        yield figure, axes


def svg_markup(figure: "Figure", key: str, label: str) -> Markup:
    """``figure`` as inline SVG for an HTML page: ids prefixed with ``key``, ``label`` as its
    accessible name. Raises RuntimeError if the SVG refers to anything outside itself."""
    import matplotlib

    buffer = io.StringIO()
    with matplotlib.rc_context(STYLE):
        figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
    text = buffer.getvalue()
    text = _PROLOG.sub("", text)
    text = _METADATA.sub("", text)
    text = _NAMESPACES.sub("", text)
    text = text.replace("xlink:href=", "href=")
    ids = set(re.findall(r'\bid="([^"]+)"', text))
    text = _REFERENCE.sub(lambda m: f"{m.group(1)}{key}-{m.group(2)}" if m.group(2) in ids else m.group(0), text)
    size = _SIZE.search(text)
    if size is None:
        raise RuntimeError("matplotlib's SVG has no width and height in points")  # a bug: the format changed
    # No fixed size: the chart fills the page's column (the viewBox keeps its shape), up to a
    # width that draws a full-width chart at the column's width and a narrower one in proportion.
    most = float(size.group(2)) * 4 / 3 * SCREEN_SCALE
    text = _SIZE.sub(lambda m: f'<svg{m.group(1)} role="img" aria-label="{_attribute(label)}" '
                               f'style="max-width:{most:.0f}px"', text, count=1)
    outside = _OUTSIDE.search(text)
    if outside is not None:
        raise RuntimeError(f"chart {key} refers outside itself near {text[outside.start():outside.start() + 60]!r}")
    return Markup(text.strip())


def _attribute(text: str) -> str:
    return text.replace("&", "&amp;").replace('"', "&quot;").replace("<", "&lt;")


def chart(key: str, label: str, height: float, paint: Callable[["Figure", object], None], width: float = WIDTH,
          rows: int = 1, columns: int = 1, fixed_layout: bool = False, **grid) -> Markup:
    """Draw with ``paint(figure, axes)`` and return the SVG: the one call a report makes per chart."""
    with drawing(height, width, rows, columns, fixed_layout, **grid) as (figure, axes):
        paint(figure, axes)
        return svg_markup(figure, key, label)


# ---------------------------------------------------------------- shared drawing

def month_axis(ax: "Axes", months: Sequence[str], every: int | None = None) -> None:
    """Months along x at 0, 1, 2…: a label every few months so that labels never overlap."""
    step = every or max(1, -(-len(months) // 16))
    ticks = list(range(0, len(months), step))
    ax.set_xticks(ticks)
    ax.set_xticklabels([months[i] for i in ticks], rotation=45, ha="right", rotation_mode="anchor")
    ax.set_xlim(-0.6, len(months) - 0.4)


def shade_immature(ax: "Axes", immature: Sequence[int], words: str = "immature: outcomes not known yet") -> None:
    """Hatch the months (x positions) without outcomes and say so in words."""
    if not immature:
        return
    for first, last in _runs(sorted(immature)):
        ax.axvspan(first - 0.5, last + 0.5, facecolor=palette.IMMATURE, alpha=0.35, hatch=palette.IMMATURE_HATCH,
                   edgecolor="#8a8f98", linewidth=0)
    first, last = _runs(sorted(immature))[-1]
    ax.text((first + last) / 2, 0.97, words, transform=ax.get_xaxis_transform(), ha="center", va="top",
            fontsize=FONT_SIZE - 0.5, color=palette.INK,
            bbox={"boxstyle": "round,pad=0.25", "facecolor": palette.PAPER, "edgecolor": palette.RULE})


def _runs(positions: Sequence[int]) -> list[tuple[int, int]]:
    runs: list[list[int]] = []
    for p in positions:
        if runs and p == runs[-1][1] + 1:
            runs[-1][1] = p
        else:
            runs.append([p, p])
    return [(a, b) for a, b in runs]


def threshold(ax: "Axes", value: float, words: str, colour: str, style: str = "--", below: bool = False) -> None:
    """A horizontal threshold line, labelled in words just above (or below) its right end, inside
    the plot, so that the label never widens the chart and the line is not told by colour alone."""
    ax.axhline(value, color=colour, linestyle=style, linewidth=1.0, zorder=1)
    ax.annotate(words, xy=(1.0, value), xycoords=("axes fraction", "data"), xytext=(-3, -2 if below else 2),
                textcoords="offset points", va="top" if below else "bottom", ha="right", fontsize=FONT_SIZE - 1,
                color=colour, bbox={"boxstyle": "square,pad=0.1", "facecolor": palette.PAPER, "edgecolor": "none",
                                    "alpha": 0.8})


def label_bars(ax: "Axes", bars, texts: Sequence[str]) -> None:
    """Write each bar's value at its end."""
    ax.bar_label(bars, labels=list(texts), padding=2, fontsize=FONT_SIZE - 1, color=palette.INK)


def percent_axis(ax: "Axes", axis: str = "y", digits: int = 0) -> None:
    from matplotlib.ticker import PercentFormatter

    (ax.yaxis if axis == "y" else ax.xaxis).set_major_formatter(PercentFormatter(1.0, decimals=digits))


def log_percent_axis(ax: "Axes") -> None:
    """A log-scale rate axis labelled at 1, 2 and 5 of each decade, as percentages."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    ax.yaxis.set_major_locator(LogLocator(base=10, subs=(1.0, 2.0, 5.0)))
    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v * 100:.2g}%"))
    ax.yaxis.set_minor_formatter(NullFormatter())


def status_points(ax: "Axes", xs: Sequence[int], ys: Sequence[float | None], statuses: Sequence[str | None],
                  colour: str, label: bool = True) -> None:
    """Markers whose shape tells the status (○ ok, △ watch, ■ alert), as the tables write it."""
    for status, marker in palette.STATUS_MARKERS.items():
        points = [(x, y) for x, y, s in zip(xs, ys, statuses) if s == status and y is not None]
        if points:
            ax.scatter([p[0] for p in points], [p[1] for p in points], marker=marker, s=30 if status != "ok" else 18,
                       facecolor=palette.PAPER if status == "ok" else colour, edgecolor=colour, linewidth=1.1,
                       zorder=4, label=f"status {status}" if label else None)


def psi_bands(ax: "Axes", watch: float, alert: float, top: float) -> None:
    """The watch and alert lines of a PSI chart whose y axis ends at ``top``; an alert line
    above the chart is named in words instead of stretching the axis over the data."""
    threshold(ax, watch, f"watch {watch:g}", palette.WATCH_LINE, "--")
    if alert <= top:
        threshold(ax, alert, f"alert {alert:g}", palette.ALERT_LINE, "-")
    else:
        ax.annotate(f"alert at {alert:g}, above the chart", xy=(1.0, 1.0), xycoords="axes fraction",
                    xytext=(-3, -2), textcoords="offset points", ha="right", va="top",
                    fontsize=FONT_SIZE - 1, color=palette.ALERT_LINE)
    ax.set_ylim(0, top)
