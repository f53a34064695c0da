"""The conventions README's "Conventions, written down" states, one test each.

Each test names the README statement it holds to. Outside references are named beside the
checks; hand-worked values are worked in the comments.
"""
from __future__ import annotations

import math
from datetime import date
from pathlib import Path

import numpy as np
import pytest
from scipy import stats
from sklearn.metrics import roc_auc_score

from scoremon import api
from scoremon.engines import DuckDBEngine
from scoremon.errors import InputError
from scoremon.monitor import queries
from scoremon.monitor.months import Month, is_mature
from scoremon.monitor.statistics import (
    HistogramSums,
    discrimination,
    psi_critical_value,
    shares_with_empty_bin_rule,
)
from scoremon.monitor.thresholds import DEFAULT_THRESHOLDS
from scoremon.spec import fingerprint, parse_spec
from scoremon.spec.model import interval_label
from scoremon.spec.terms import feature_terms
from tests.compiler.test_rounding import scored as rounding_scored
from tests.conftest import FIXTURES, ROOT
from tests.monitor.book import SPEC_PATH
from tests.sql import fetched, tree

README = (ROOT / "README.md").read_text(encoding="utf-8")
SMALL = (FIXTURES / "small.yaml").read_text(encoding="utf-8")


def written(statement: str) -> None:
    """The README says it (words kept together on one line or wrapped)."""
    assert statement in " ".join(README.split()), statement


def test_the_auc_interval_is_clipped_to_zero_and_one():
    written("The AUC's confidence interval is clipped to [0, 1]")
    # events score low (worse); one tie: events 1, 1, 1, 2 against non-events 2, 3, 3, 3
    events, non_events = [1, 1, 1, 2], [2, 3, 3, 3]
    values = sorted(set(events + non_events))
    b = [events.count(v) for v in values]
    g = [non_events.count(v) for v in values]
    B, G = sum(b), sum(g)
    running_b, running_g = np.cumsum(b), np.cumsum(g)
    sums = HistogramSums(  # the definitions in HistogramSums' docstring
        B, G,
        sum(bv * (G - gv_to + gv / 2) for bv, gv, gv_to in zip(b, g, running_g)),
        max(bt * G - gt * B for bt, gt in zip(running_b, running_g)),
        min(bt * G - gt * B for bt, gt in zip(running_b, running_g)),
        sum(bv * (G - gv_to + gv / 2) ** 2 for bv, gv, gv_to in zip(b, g, running_g)),
        sum(gv * (bv_to - bv / 2) ** 2 for bv, gv, bv_to in zip(b, g, running_b)))
    found = discrimination(sums)
    # AUC against scikit-learn, events as the positive class ranked by −score
    assert found.auc == pytest.approx(roc_auc_score([1] * 4 + [0] * 4, [-s for s in events + non_events]))
    assert found.auc + stats.norm.ppf(0.975) * found.auc_standard_error > 1.0  # the raw interval passes 1
    assert found.auc_upper == 1.0 and 0.0 <= found.auc_lower < found.auc


def test_a_month_is_mature_on_the_last_day_of_month_plus_window():
    written("A month is mature when the last day of (month + performance window) is on or before the as-of date")
    # 2025-11 + 12 months = 2026-11, whose last day is 30 November 2026 (hand-worked)
    assert is_mature(Month(2025, 11), 12, date(2026, 11, 30))
    assert not is_mature(Month(2025, 11), 12, date(2026, 11, 29))
    assert not is_mature(Month(2025, 12), 12, date(2026, 11, 30))


def test_development_deciles_keep_ties_together():
    written("a score value is never split between bands: the edge of decile k is the lowest score value "
            "with at least k/10 of the development rows strictly below it")
    engine = DuckDBEngine(":memory:")
    # 40 rows at 500, then one row at each of 501 … 560 (100 rows): hand-worked edges
    engine.execute(tree("CREATE TABLE s AS SELECT 500.0 AS score FROM range(40) UNION ALL "
                        "SELECT 501.0 + i AS score FROM range(60) t(i)"), "making scores")
    relation = queries.exp.to_table("s")
    (edges,) = fetched(engine, queries.decile_edges_pass(relation), "deciles")
    # k = 1…4 need 10…40 rows below: 501 has 40 below; k = 5 needs 50: 511 (40 + 10), and so on
    assert list(edges) == [501.0, 501.0, 501.0, 501.0, 511.0, 521.0, 531.0, 541.0, 551.0]
    engine.close()


def test_the_empty_bin_rule_adds_half_a_row_to_every_bin_of_that_side():
    written("every bin on that side gets half a row (so the shares are (n + ½) / (N + B/2) for B bins)")
    # hand-worked: rows (0, 10, 30): N = 40, B = 3 → (0.5, 10.5, 30.5) / 41.5
    assert list(shares_with_empty_bin_rule([0, 10, 30])) == pytest.approx([0.5 / 41.5, 10.5 / 41.5, 30.5 / 41.5])
    assert list(shares_with_empty_bin_rule([10, 30])) == pytest.approx([0.25, 0.75])  # no empty bin: unchanged


def test_the_critical_value_shown_is_at_95_and_alerts_use_99_percent():
    written("the critical value shown is at 95 %; a PSI alert needs the critical value at 99 %")
    assert (DEFAULT_THRESHOLDS.psi_confidence.watch, DEFAULT_THRESHOLDS.psi_confidence.alert) == (0.95, 0.99)
    # Yurdakul & Naranjo (2020), CHECKS.md §3: B = 10, M = 10 000, N = 1 000 → 0.01861 / 0.02383
    assert psi_critical_value(10, 10_000, 1_000, 0.95) == pytest.approx(0.01861, abs=5e-6)
    assert psi_critical_value(10, 10_000, 1_000, 0.99) == pytest.approx(0.02383, abs=5e-6)


def test_the_missing_rate_counts_nan_as_missing():
    written("The missing rate is the share of rows in the missing bin, so it counts NaN as missing")
    engine = DuckDBEngine(":memory:")
    rows = []
    for month in (date(2024, 1, 1), date(2024, 2, 1)):
        for i in range(40):
            age = 20.0 + i
            if month.month == 2 and i < 4:
                age = math.nan
            elif month.month == 2 and i < 6:
                age = None
            rows.append((month, age, "N1", 0.5, i % 2))
    engine.write_rows(["book"], [("application_month", "DATE"), ("age", "DOUBLE"), ("region_code", "VARCHAR"),
                                 ("utilisation", "DOUBLE"), ("bad", "BIGINT")], rows, "loading")
    report = api.monitor(api.load_spec(SPEC_PATH), engine, "book", "application_month", date(2024, 2, 29), "bad",
                         baseline_months=(Month(2024, 1), Month(2024, 1)), record_history=False)
    february = report.months[-1]
    age = next(q for q in february.quality if q.feature == "age")
    assert age.missing_rate == pytest.approx(6 / 40)  # 4 NaN and 2 NULL of 40 rows
    engine.close()


def test_maximum_points_include_the_missing_and_catch_all_bins():
    written("a feature's maximum points include its missing bin and its catch-all bin")
    text = SMALL.replace("other: {label: elsewhere, log_odds: 0.05}", "other: {label: elsewhere, log_odds: -0.9}")
    text = text.replace("missing: {woe: -0.2}", "missing: {woe: 2.0}")
    spec = parse_spec(text)
    factor = spec.scaling.factor
    age, region = spec.features[0], spec.features[1]
    # age: missing woe 2.0 × coefficient −1 → log-odds −2.0 → points 2.0·factor, above every bin
    assert feature_terms(spec, age).max_points == pytest.approx(2.0 * factor)
    # region: the catch-all's log-odds −0.9 → 0.9·factor, above north (−0.3·factor) and south
    assert feature_terms(spec, region).max_points == pytest.approx(0.9 * factor)


def test_default_bin_labels():
    written("A bin without a label is labelled by its interval, `[25, 40)` or `(25, 40]`")
    assert interval_label(25.0, 40.0, "lower") == "[25, 40)"
    assert interval_label(25.0, 40.0, "upper") == "(25, 40]"
    assert interval_label(-math.inf, 0.5, "lower") == "[-inf, 0.5)"
    assert interval_label(1e-300, math.inf, "upper") == "(1e-300, inf]"


def test_linear_terms_are_rounded_under_per_bin():
    written("Under `per_bin` a linear term's points are rounded too, row by row")
    # the identity spec of the rounding tests: points = x
    assert [row["x_points"] for row in rounding_scored("per_bin", [2.5, 0.4, -1.5])] == [3.0, 0.0, -2.0]


def test_feature_and_reason_order_change_the_fingerprint_and_bin_order_does_not():
    written("the order of features and of reason statements changes it")
    base = fingerprint(parse_spec(SMALL))
    statements = ("    - {code: R1, text: Young applicant, features: [age]}\n"
                  "    - {code: R2, text: Region risk, features: [region]}\n")
    swapped = ("    - {code: R2, text: Region risk, features: [region]}\n"
               "    - {code: R1, text: Young applicant, features: [age]}\n")
    assert statements in SMALL
    assert fingerprint(parse_spec(SMALL.replace(statements, swapped))) != base
    age_start, region_start = SMALL.index("  - name: age"), SMALL.index("  - name: region")
    linear_start = SMALL.index("  - name: utilisation")
    features_swapped = (SMALL[:age_start] + SMALL[region_start:linear_start] + SMALL[age_start:region_start]
                        + SMALL[linear_start:])
    assert fingerprint(parse_spec(features_swapped)) != base
    bins = ("      - {lower: -.inf, upper: 25, woe: -0.5}\n      - {lower: 25, upper: 40, woe: 0.1}\n")
    assert fingerprint(parse_spec(SMALL.replace(bins, bins.splitlines(True)[1] + bins.splitlines(True)[0]))) == base


def test_parquet_output_needs_the_duckdb_engine(tmp_path):
    written("Parquet output needs the DuckDB engine")

    class Other:
        """An engine that declares it cannot write files (as PostgreSQL and Spark do)."""
        dialect = "postgres"
        reads_files = writes_parquet = ignores_column_case = False

    with pytest.raises(InputError, match="writing a Parquet or CSV file needs the DuckDB engine"):
        api.score(parse_spec(SMALL), Other(), api.source_relation(table="book"), out_file=tmp_path / "x.parquet")


def test_the_tsql_rendering_uses_greatest():
    written("The T-SQL rendering needs SQL Server 2022 or newer (it uses GREATEST for the reasons)")
    assert "GREATEST(" in api.compile_sql(parse_spec(SMALL), "tsql")


def test_snowflake_names_are_quoted_as_written():
    written("on Snowflake quoted lower-case names do not match unquoted upper-case columns")
    sql = api.compile_sql(parse_spec(SMALL), "snowflake")
    assert '"age"' in sql and '"region_code"' in sql


def test_the_quick_start_says_what_the_test_command_needs():
    written("needs PostgreSQL server binaries and Java 17 (`.ci/run` installs them) and takes about 12 minutes "
            "on 2 cores")
    ci = Path(ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert "postgresql" in ci and "openjdk-17" in ci
