"""The shared toolkit: SVG made fit for a page, the page's escaping and status cells, the
palette's colour-blind rule; and a start-up without matplotlib."""
from __future__ import annotations

import re
import subprocess
import sys
from itertools import combinations
from pathlib import Path

import pytest

from scoremon.report.html import charts, palette
from scoremon.report.html.page import Section, Stamp, number, percent, render_page, status_cell, table


def line_chart(key: str):
    def paint(fig, ax):
        ax.plot([0, 1, 2], [0.1, 0.3, 0.2], label="a line")
        ax.fill_between([0, 1, 2], [0, 0.1, 0.1], [0.2, 0.4, 0.3], hatch="///")
        ax.set_title("glyphs and a clip path")
        ax.legend()

    return charts.chart(key, "a test chart", 2.0, paint)


# ---------------------------------------------------------------- SVG for a page

def test_svg_has_no_prolog_metadata_or_outside_reference():
    svg = line_chart("one")
    assert svg.startswith("<svg") and svg.rstrip().endswith("</svg>")
    assert "<?xml" not in svg and "<!DOCTYPE" not in svg and "<metadata" not in svg
    assert not re.search(r"https?:|xmlns", svg)
    assert 'role="img"' in svg and 'aria-label="a test chart"' in svg


def test_two_charts_on_one_page_share_no_id():
    first, second = line_chart("first"), line_chart("second")
    ids_first = set(re.findall(r'\bid="([^"]+)"', first))
    ids_second = set(re.findall(r'\bid="([^"]+)"', second))
    assert ids_first and ids_second and not ids_first & ids_second
    # every internal reference points at an id of its own chart
    for svg, ids in ((first, ids_first), (second, ids_second)):
        assert set(re.findall(r'(?:href="#|url\(#)([^")]+)', svg)) <= ids


def test_text_is_drawn_as_outlines_so_no_font_is_fetched():
    svg = line_chart("glyphs")
    assert "<text" not in svg and "font-family" not in svg
    assert re.search(r'<use href="#glyphs-DejaVuSans-', svg)


def test_a_chart_with_a_raster_image_is_refused():
    def paint(fig, ax):
        ax.imshow([[0.0, 1.0], [1.0, 0.0]])  # matplotlib embeds a raster as a data: URL

    with pytest.raises(RuntimeError, match="refers outside itself"):
        charts.chart("raster", "a raster", 2.0, paint)


def test_same_figures_give_the_same_svg():
    assert line_chart("same") == line_chart("same")


# ---------------------------------------------------------------- page

def test_text_from_a_spec_is_escaped_everywhere():
    hostile = '<script>alert("x")</script>'
    stamp = Stamp("Monitoring report", hostile, ((hostile, "abc"),), "duckdb", f"table {hostile}", 10, "now")
    html = render_page(stamp, [Section(hostile, (table([hostile], [[hostile]]),), hostile, "s")])
    assert "<script>" not in html
    assert html.count("&lt;script&gt;") >= 6


@pytest.mark.parametrize("status, words", [("ok", "○ ok"), ("watch", "△ watch"), ("alert", "■ alert")])
def test_a_status_cell_writes_the_status_in_words_and_shape(status, words):
    cell = status_cell(status, "0.123")
    assert words in cell and "0.123" in cell
    assert palette.STATUS_LOOKS[status].fill in cell


def test_a_quiet_ok_cell_keeps_the_shape():
    cell = status_cell("ok", "0.001", quiet_ok=True)
    assert "0.001 ○" in cell and "ok<" not in cell


# ---------------------------------------------------------------- palette

@pytest.mark.parametrize("colour, published", [
    # CIE 1976 L* of sRGB colours (D65): white 100 and black 0 by definition; mid grey #808080
    # is 53.59 (from memory; the CIE formulas reproduce it)
    ("#ffffff", 100.0), ("#000000", 0.0), ("#808080", 53.59),
])
def test_lightness_follows_the_cie_formula(colour, published):
    assert palette.lightness(colour) == pytest.approx(published, abs=0.01)


def test_colours_that_must_be_told_apart_differ_in_lightness():
    # lightness survives every colour-vision deficiency and greyscale printing (see palette's docstring)
    groups = {
        "statuses": [look.fill for look in palette.STATUS_LOOKS.values()],
        "series": [s.colour for s in palette.SERIES],
    }
    for name, colours in groups.items():
        for a, b in combinations(colours, 2):
            assert abs(palette.lightness(a) - palette.lightness(b)) >= 15, (name, a, b)


def test_shades_darken_steadily():
    # a shaded cell's share must be readable from its lightness alone
    steps = [palette.lightness(c) for c in palette.SHADES]
    assert all(later < earlier - 10 for earlier, later in zip(steps, steps[1:]))


def test_text_on_status_fills_has_contrast():
    for look in palette.STATUS_LOOKS.values():
        assert abs(palette.lightness(look.fill) - palette.lightness(look.ink)) >= 50
        assert look.word and look.mark  # never colour alone


def test_series_differ_in_line_and_marker_too():
    assert len({s.line for s in palette.SERIES}) == len(palette.SERIES)
    assert len({(palette.series(i).colour, palette.series(i).marker) for i in range(12)}) == 12


def test_the_command_line_starts_without_matplotlib():
    # matplotlib loads on the first chart only, so `scoremon --help` and every run without a
    # report start as fast as before
    code = "import sys, scoremon.cli; print('matplotlib' in sys.modules)"
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                            cwd=Path(__file__).resolve().parents[3])
    assert result.stdout.strip() == "False"


def test_numbers_that_round_to_zero_carry_no_minus_sign():
    assert number(-0.0004, 3) == "0.000" and number(-0.0004, 3, signed=True) == "+0.000"
    assert percent(-0.00001, 1, signed=True) == "+0.0%" and percent(-0.0123, 1, signed=True) == "-1.2%"
    assert number(None) == "–" and number(1234.5, 1) == "1,234.5"
