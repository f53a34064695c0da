"""Fixtures of the HTML report tests: the demo's reports, built once, and a headless Chromium.

``demo_reports`` runs ``scoremon demo`` on a small book (its four reports: fit, monitoring,
diff, history pack), then monitors the same book with version 2 of the demo model so that a
second history pack has two model versions to draw, and fits the demo's development table
again with a ridge penalty so that a fit report has a λ path to draw (the demo's own fit is
unpenalised). ``chromium`` is Debian's Chromium
(``/usr/bin/chromium``) driven by Playwright; when it cannot start the tests that need it fail
in CI (``CI=true``) and are skipped elsewhere, with the reason.
"""
from __future__ import annotations

import argparse
from dataclasses import dataclass
from pathlib import Path

import pytest

from demo_warehouse import develop, generate
from demo_warehouse.develop import REVIEWED_BINS_FILE
from demo_warehouse.run import (
    DIFF_HTML_FILE,
    FIT_HTML_FILE,
    MONITOR_HTML_FILE,
    PACK_HTML_FILE,
    SPEC_V2,
    run_demo,
)
from scoremon import api, files
from scoremon.report.html.fit import fit_html
from scoremon.report.html.pack import pack_html
from tests.conftest import in_ci

DEMO_ROWS = 20_000
CHROMIUM = Path("/usr/bin/chromium")
# Headless, and nothing that phones home: no background networking, component updates or sync.
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update", "--disable-sync"]


@dataclass(frozen=True)
class DemoReports:
    folder: Path
    database: Path
    monitor: Path
    diff: Path
    pack: Path
    pack_two_versions: Path
    fit: Path
    fit_penalised: Path
    penalised: api.FitReport

    @property
    def all(self) -> dict[str, Path]:
        return {"monitor": self.monitor, "diff": self.diff, "pack": self.pack,
                "pack_two_versions": self.pack_two_versions, "fit": self.fit, "fit_penalised": self.fit_penalised}


@pytest.fixture(scope="session")
def demo_reports(tmp_path_factory) -> DemoReports:
    folder = tmp_path_factory.mktemp("demo-reports")
    assert run_demo(argparse.Namespace(rows=DEMO_ROWS, folder=str(folder))) == 0
    database = folder / "quillfield.duckdb"
    engine = api.open_engine(str(database))
    try:
        v2 = api.load_spec(SPEC_V2)
        baseline = api.measure_development(v2, engine, api.source_relation(table=generate.DEVELOPMENT),
                                           generate.OUTCOME_COLUMN, generate.MONTH_COLUMN, "table development")
        v2_path = api.write_spec_with_baseline(SPEC_V2, baseline, folder / "spec_v2_with_baseline.yaml")
        api.monitor(api.load_spec(v2_path), engine, generate.APPLICATIONS, generate.MONTH_COLUMN, generate.AS_OF,
                    generate.OUTCOME_COLUMN)
        history = api.read_history(engine, v2.model.name)
        penalised = api.fit_development(engine, api.read_binning(folder / REVIEWED_BINS_FILE),
                                        api.FitSettings(key=generate.KEY_COLUMN, penalty="l2", folds=3, lambdas=6,
                                                        drop=develop.SETTINGS.drop),
                                        api.Naming(name="quillfield_application", version="ridge"),
                                        folder / "spec_ridge.yaml")
    finally:
        engine.close()
    two = files.write_text(folder / "history_pack_two_versions.html", pack_html(history, "duckdb"))
    ridge = files.write_text(folder / "fit_report_ridge.html", fit_html(penalised, "duckdb"))
    return DemoReports(folder, database, folder / MONITOR_HTML_FILE, folder / DIFF_HTML_FILE, folder / PACK_HTML_FILE,
                       two, folder / FIT_HTML_FILE, ridge, penalised)


def browser_unavailable(reason: str):
    """Fail in CI, skip with the reason elsewhere: never a silent pass."""
    if in_ci():
        pytest.fail(f"CI needs Chromium for the report checks: {reason}", pytrace=False)
    pytest.skip(reason)


@pytest.fixture(scope="session")
def chromium():
    try:
        from playwright.sync_api import sync_playwright
    except ImportError as error:
        browser_unavailable(f"Playwright is not installed ({error}); pip install -e '.[test]'")
    if not CHROMIUM.exists():
        browser_unavailable(f"{CHROMIUM} is missing; apt-get install chromium")
    manager = sync_playwright().start()
    try:
        browser = manager.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS, headless=True)
    except Exception as error:  # any launch failure is reported as the reason, in full
        manager.stop()
        browser_unavailable(f"Chromium at {CHROMIUM} did not start: {error}")
    yield browser
    browser.close()
    manager.stop()
