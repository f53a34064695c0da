"""The colours, line styles and status marks of the HTML reports, in one place.

Why these colours. About one man in twelve sees red and green alike (protan and deutan colour
vision); fewer confuse blue with yellow (tritan). All of them, and a greyscale printout, still
see *lightness*. So every pair of colours that must be told apart differs in lightness by at
least 15 points of CIE L* (a test keeps it so), and where hue helps too it runs along the
blue–ochre axis, the one that protan and deutan vision keeps:

* series: a deep blue (L* 25) for the reference side — the baseline, the old version, the
  first model version — and an ochre (L* 58) for the side being compared, then a light blue
  (L* 79) and a brown (L* 42) for further model versions. Each series also has its own line
  style and marker, so a chart reads without any colour at all;
* statuses: severity is darkness — ``ok`` nearly white, ``watch`` a mid ochre, ``alert`` a
  dark brown with white text — and a status is always written out in words or marked with
  its shape (○ ok, △ watch, ■ alert), never left to colour alone;
* shaded cells (the grade migration): one hue, white through pale and mid blue to the deep
  blue above, lightness falling evenly with the share — a single-hue ramp reads the same in
  every form of colour vision and in greyscale — with the number written in each cell, in
  white where the fill is dark;
* months whose outcomes are not known yet are hatched grey and labelled "immature", never
  drawn as a zero.
"""
from __future__ import annotations

from dataclasses import dataclass

INK = "#1d2433"  # text, axes
MUTED = "#5b6472"  # secondary text, grid labels
RULE = "#d9dde3"  # grid lines, borders
PAPER = "#ffffff"
IMMATURE = "#d9dde3"  # fill under the hatching of immature months
IMMATURE_HATCH = "////"


@dataclass(frozen=True)
class Series:
    """How one data series is drawn: colour, line style, marker, and its words in a legend."""

    colour: str
    line: str
    marker: str


# The reference side first (baseline, old version), then the compared side, then more versions.
SERIES = (
    Series("#22396a", "-", "o"),  # deep blue, L* 25
    Series("#c47a00", "--", "s"),  # ochre, L* 58
    Series("#a9c6ec", ":", "^"),  # light blue, L* 79
    Series("#935514", "-.", "D"),  # brown, L* 42
)
REFERENCE, COMPARED = SERIES[0], SERIES[1]
BAND = "#c9d8ee"  # a confidence band around a reference-coloured line (L* 86)
COMPARED_BAND = "#f6dfb4"  # a band around a compared-coloured line (L* 90)


def series(index: int) -> Series:
    """The ``index``-th series style; past the fourth the colours repeat with other markers."""
    base = SERIES[index % len(SERIES)]
    if index < len(SERIES):
        return base
    markers = ("v", "P", "X", "*")
    return Series(base.colour, base.line, markers[(index // len(SERIES) - 1) % len(markers)])


@dataclass(frozen=True)
class StatusLook:
    """A status as it is drawn: its word, its shape, the cell fill and the text colour on it."""

    word: str
    mark: str
    fill: str
    ink: str


STATUS_LOOKS = {
    "ok": StatusLook("ok", "○", "#eef2f7", INK),  # L* 95
    "watch": StatusLook("watch", "△", "#e8b04a", INK),  # L* 75
    "alert": StatusLook("alert", "■", "#7a3d00", "#ffffff"),  # L* 33
}
NO_STATUS = StatusLook("no figure", "–", PAPER, MUTED)
# The same shapes as matplotlib markers, for charts: circle, triangle, square.
STATUS_MARKERS = {"ok": "o", "watch": "^", "alert": "s"}

# Threshold lines on PSI and AUC charts; each is also labelled in words on the chart.
WATCH_LINE = "#c47a00"
ALERT_LINE = "#7a3d00"
CRITICAL_LINE = SERIES[0].colour

SHADES = ("#ffffff", "#c9d8ee", "#7ea6d8", "#4f79b8", "#23395d")  # L* 100, 86, 67, 50, 24


def status_look(status: str | None) -> StatusLook:
    """How ``status`` (``ok`` / ``watch`` / ``alert`` / None) is drawn."""
    return STATUS_LOOKS.get(status or "", NO_STATUS)


def lightness(colour: str) -> float:
    """CIE 1976 L* of an sRGB colour written ``#rrggbb`` (D65 white)."""
    channels = [int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    linear = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    luminance = 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]
    f = luminance ** (1 / 3) if luminance > 216 / 24389 else (24389 / 27 * luminance + 16) / 116
    return 116 * f - 16


def text_on(colour: str) -> str:
    """Ink that reads on a fill of ``colour``: white on dark fills, the usual ink on light ones."""
    return PAPER if lightness(colour) < 55 else INK
