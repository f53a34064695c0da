"""One score, one PD: the spec's ``scaling.pd_from`` says which PD a row reports.

Check value: the scaling's own definition of the score (Siddiqi, *Credit Risk Scorecards*, 2006,
ch. 6, from memory): score = offset + factor · ln(good:bad odds), so a score s stands for the
odds base_odds · 2^((s − base_score) / pdo) and the PD 1 / (1 + those odds). Computed here
with math.pow, not with the compiler's arithmetic.
"""
from __future__ import annotations

import math

import pytest

from scoremon.cli import main
from scoremon.diff import diff_models
from scoremon.engines import DuckDBEngine
from scoremon.spec import fingerprint, parse_spec
from tests.compiler.through_sql import score_columns
from tests.conftest import FIXTURES

SMALL = (FIXTURES / "small.yaml").read_text(encoding="utf-8")
AGES = [18.0, 24.0, 25.0, 30.0, 39.9, 40.0, 65.0, None]
REGIONS = ["N1", "S1", "Z9", None, "N2", "S1", "N1", "Z9"]
USES = [0.0, 0.13, 0.5, 0.77, 1.0, 1.2, None, 0.31]


def small(rounding: str, pd_from: str | None = None):
    text = SMALL.replace("  rounding: none", f"  rounding: {rounding}")
    if pd_from:
        text = text.replace(f"  rounding: {rounding}", f"  rounding: {rounding}\n  pd_from: {pd_from}")
    return parse_spec(text)


def scored(spec) -> list[dict]:
    columns = {"row_id": ("INTEGER", list(range(len(AGES)))), "age": ("DOUBLE", AGES),
               "region_code": ("VARCHAR", REGIONS), "utilisation": ("DOUBLE", USES)}
    return score_columns(spec, columns, "row_id")[1]


def pd_of_score(spec, score: float) -> float:
    odds = spec.scaling.base_odds * math.pow(2.0, (score - spec.scaling.base_score) / spec.scaling.pdo)
    return 1.0 / (1.0 + odds)


@pytest.mark.parametrize("rounding", ["per_bin", "total"])
def test_a_rounded_scorecard_reports_the_pd_of_its_score(rounding):
    spec = small(rounding)
    assert spec.scaling.reported_pd == "score"
    for row in scored(spec):
        assert row["pd"] == pytest.approx(pd_of_score(spec, row["score"]), rel=1e-12, abs=0)


def test_the_pd_of_the_base_score_is_one_over_one_plus_the_base_odds():
    # base score 600 at 50:1 → PD 1/51 (the scaling's definition)
    spec = small("total")
    assert pd_of_score(spec, 600.0) == pytest.approx(1 / 51, rel=1e-15)


def test_log_odds_is_the_default_without_rounding_and_can_be_asked_for():
    assert small("none").scaling.reported_pd == "log_odds"
    exact = small("per_bin", "log_odds")
    rows = scored(exact)
    # PD from the exact log-odds: not a function of the rounded score
    assert any(row["pd"] != pytest.approx(pd_of_score(exact, row["score"]), rel=1e-9) for row in rows)


def test_the_choice_is_in_the_fingerprint_and_a_written_default_is_not():
    assert fingerprint(small("per_bin", "score")) == fingerprint(small("per_bin"))
    assert fingerprint(small("per_bin", "log_odds")) != fingerprint(small("per_bin"))
    assert fingerprint(small("none", "log_odds")) == fingerprint(small("none"))
    assert fingerprint(small("none", "score")) != fingerprint(small("none"))


def test_diff_shows_the_choice():
    changes = diff_models(small("per_bin"), small("per_bin", "log_odds")).changes
    (change,) = [c for c in changes if c.subject == "scaling.pd_from"]
    assert "PD from the exact log-odds (was from the rounded score)" in change.summary


def test_score_says_which_pd_the_rows_report(tmp_path, capsys):
    database = tmp_path / "book.duckdb"
    engine = DuckDBEngine(str(database))
    engine.write_rows(["book"], [("age", "DOUBLE"), ("region_code", "VARCHAR"), ("utilisation", "DOUBLE")],
                      [(30.0, "N1", 0.5)], "loading")
    engine.close()
    spec = tmp_path / "rounded.yaml"
    spec.write_text(SMALL.replace("  rounding: none", "  rounding: per_bin"), encoding="utf-8")
    assert main(["score", str(spec), "--db", str(database), "--table", "book", "--out-table", "scored"]) == 0
    assert "pd: PD from the rounded score (the spec's scaling.pd_from)" in capsys.readouterr().out.splitlines()
