"""What the demo's reports say, read from their HTML: self-contained, stamped, every section
there, statuses in words, immature months labelled, the cautions at the foot.

The demo's numbers are invented, so nothing here checks a figure's value: only that the report
carries what its records hold (the records' own values, read back from the JSON or history).
"""
from __future__ import annotations

import html
import json
import re
from html.parser import HTMLParser

import pytest

from scoremon import api
from scoremon.report.cautions import CAUTIONS
from scoremon.report.html.fit import COEFFICIENT_COLUMNS
from scoremon.spec import fingerprint

REPORTS = ("monitor", "diff", "pack", "pack_two_versions", "fit", "fit_penalised")


class Collect(HTMLParser):
    """Tags, attributes and ids of a page, and its text with the tags taken out."""

    def __init__(self):
        super().__init__()
        self.tags: list[tuple[str, dict]] = []
        self.ids: list[str] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        self.tags.append((tag, attributes))
        if "id" in attributes:
            self.ids.append(attributes["id"])

    handle_startendtag = handle_starttag

    def handle_data(self, data):
        self.text.append(data)


def parsed(path) -> Collect:
    collect = Collect()
    collect.feed(path.read_text(encoding="utf-8"))
    return collect


@pytest.mark.parametrize("name", REPORTS)
def test_report_is_self_contained(demo_reports, name):
    text = demo_reports.all[name].read_text(encoding="utf-8")
    page = parsed(demo_reports.all[name])
    tags = {tag for tag, _ in page.tags}
    assert not tags & {"script", "img", "link", "iframe", "object", "embed", "image"}
    assert not re.search(r"https?:|ftp:|data:|@import|url\((?!#)", text, re.I)
    for _, attributes in page.tags:
        for key in ("href", "src", "xlink:href"):
            value = attributes.get(key)
            assert value is None or value.startswith("#"), (key, value)
    # every id once, so each chart's references stay inside the chart
    assert len(page.ids) == len(set(page.ids))
    referenced = set(re.findall(r'(?:href="#|url\(#)([^")]+)', text))
    assert referenced <= set(page.ids)


@pytest.mark.parametrize("name", REPORTS)
def test_report_ends_with_the_cautions(demo_reports, name):
    text = demo_reports.all[name].read_text(encoding="utf-8")
    assert CAUTIONS.replace("'", "&#x27;") in text
    assert text.rindex('class="cautions"') > text.rindex("<section")


def test_monitor_report_carries_the_run(demo_reports):
    report = json.loads((demo_reports.folder / "monitor_v1.json").read_text(encoding="utf-8"))
    text = demo_reports.monitor.read_text(encoding="utf-8")
    page = " ".join(parsed(demo_reports.monitor).text)
    for value in (report["model_name"], report["model_fingerprint"], report["as_of"], report["run_id"],
                  report["run_at"], f"{sum(m['rows'] for m in report['months']):,} rows"):
        assert value in page, value
    for title in ("Status by month", "Score bands", "Score stability by month", "Characteristic stability",
                  "Mean score shift", "Calibration", "Discrimination", "Data quality"):
        assert f"</span>{title}</h2>" in text, title
    # 8 charts: bands, score PSI, shift, calibration by grade and by month, AUC, volume, rates
    assert text.count('role="img"') == 8
    # every month that is not mature is written as immature in the calibration numbers, never 0
    immature = [m["month"] for m in report["months"] if m["maturity"] != "mature"]
    assert immature
    for month in immature:
        assert re.search(rf"<td>{month}</td><td class=\"n\">immature</td>", text), month
    # a status is written in words, with its shape
    for month in report["months"]:
        if month["status"] in ("watch", "alert"):
            assert {"watch": "△ watch", "alert": "■ alert"}[month["status"]] in page


def test_monitor_report_hatches_immature_months(demo_reports):
    text = demo_reports.monitor.read_text(encoding="utf-8")
    # matplotlib writes a hatch as an SVG <pattern>: the calibration-by-month and AUC charts have one
    for key in ("calibration-months", "auc"):
        chart = text[text.index(f'id="{key}-'):]
        chart = chart[: chart.index("</svg>")]
        assert "<pattern" in chart, key


def test_diff_report_carries_both_versions(demo_reports):
    text = demo_reports.diff.read_text(encoding="utf-8")
    page = " ".join(parsed(demo_reports.diff).text)
    markdown = (demo_reports.folder / "diff_v1_v2.md").read_text(encoding="utf-8")
    fingerprints = re.findall(r"`([0-9a-f]{16})`", markdown)
    assert len(fingerprints) == 2 and all(fp in page for fp in fingerprints)
    for title in ("Changes", "Grade migration", "Score change", "Swap set", "First reasons",
                  "Points per changed characteristic"):
        assert f"</span>{title}</h2>" in text, title
    # the change list has one row per change the Markdown lists
    changes = len(re.findall(r"^\| \d+ \|", markdown, re.M))
    assert changes > 0 and f"<dd>{changes}</dd>" in text


def test_two_version_pack_draws_a_line_per_version(demo_reports):
    page = " ".join(parsed(demo_reports.pack_two_versions).text)
    text = demo_reports.pack_two_versions.read_text(encoding="utf-8")
    assert "version 1 (" in page and "version 2 (" in page
    assert text.count('role="img"') == 3
    one = demo_reports.pack.read_text(encoding="utf-8")
    assert "version 2 (" not in " ".join(parsed(demo_reports.pack).text)
    assert one.count('role="img"') == 3


FIT_SECTIONS = ("The fit at a glance", "Information value ranking", "Characteristics over their bins",
                "λ path and cross-validation", "ROC curve and KS")


def test_fit_report_carries_the_fit(demo_reports):
    spec = api.load_spec(demo_reports.folder / "spec_fitted.yaml")
    text = demo_reports.fit.read_text(encoding="utf-8")
    page = " ".join(parsed(demo_reports.fit).text)
    for value in (spec.model.name, spec.model.version, fingerprint(spec), f"{spec.development.rows:,} rows",
                  "table development"):
        assert value in page, value
    for title in FIT_SECTIONS:
        assert f"</span>{title}</h2>" in text, title
    # the demo's fit is unpenalised, and the report says so instead of drawing an empty path
    assert "Not penalised: this fit used no penalty" in page and 'id="path-' not in text
    # IV ranking, one chart per characteristic in the model, ROC
    assert text.count('role="img"') == 1 + len(spec.features) + 1
    for feature in spec.features:
        assert f"<h3>{feature.name}</h3>" in text


def test_penalised_fit_report_draws_the_path_and_marks_the_chosen_lambda(demo_reports):
    report = demo_reports.penalised
    text = demo_reports.fit_penalised.read_text(encoding="utf-8")
    page = " ".join(parsed(demo_reports.fit_penalised).text)
    assert 'id="path-' in text and "Not penalised" not in page
    assert f"λ {report.chosen_lambda:.3g} was chosen" in page
    # the path's numbers: one row per λ in the path table and in each table of coefficients
    # (a few characteristics each), the chosen λ marked in words
    rows = re.findall(r"<tr><td class=\"n\">[0-9.e+-]+</td>", text)
    tables = 1 + -(-len(report.characteristics) // COEFFICIENT_COLUMNS)
    assert len(rows) == len(report.path) * tables
    assert ">chosen</td>" in text
    d = report.discrimination
    assert f"Gini {d.gini:.3f}" in page and f"KS {d.ks:.3f}" in page
    # every warning of the fit is written out, with its status in words
    for warning in report.warnings:
        assert html.escape(warning, quote=True) in text
    assert text.count("△ watch") >= len(report.warnings)
