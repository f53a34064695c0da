"""What the demo's reports say, read from their HTML: self-contained, stamped, every section
there, statuses in words, immature months labelled, the cautions at the foot.

The demo's numbers are invented, so nothing here checks a figure's value: only that the report
carries what its records hold (the records' own values, read back from the JSON or history).
"""
from __future__ import annotations

import json
import re
from html.parser import HTMLParser

import pytest

from scoremon.report.cautions import CAUTIONS

REPORTS = ("monitor", "diff", "pack", "pack_two_versions")


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
