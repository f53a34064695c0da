"""The demo: the book generator, the development step behind spec_v1.yaml, how spec_v2.yaml
follows from it, and ``scoremon demo``.

The demo's numbers are invented, so no test uses one as a check value: the generator is
checked for determinism, shape, maturity of outcomes and the planted drift being there; the
committed specs are checked to be what their stated making gives (the development step run
again; version 2's numbers made again with numpy, pandas and statsmodels); the command end to
end. The fitting arithmetic itself is tested in tests/develop against outside references.
"""
from __future__ import annotations

import copy
import dataclasses
import math
from datetime import date
from decimal import ROUND_HALF_UP, Decimal
from pathlib import Path

import duckdb
import numpy as np
import pandas as pd
import pytest
import statsmodels.api as statsmodels_api
import yaml

from demo_warehouse import develop, generate
from demo_warehouse.develop import FITTED_SPEC_FILE
from demo_warehouse.run import DATABASE_NAME, SCORED, SPEC_V1, SPEC_V2
from scoremon import api, cli
from scoremon.report.cautions import CAUTIONS
from tests.develop import fitdata

SMALL = 6_000
MEDIUM = 60_000


def query(database: Path, sql: str, parameters=()):
    connection = duckdb.connect(str(database), read_only=True)
    try:
        return connection.execute(sql, list(parameters)).fetchall()
    finally:
        connection.close()


def months_between(first: date, later: date) -> int:
    return (later.year - first.year) * 12 + later.month - first.month


@pytest.fixture(scope="module")
def book(tmp_path_factory):
    """One medium book shared by the read-only tests of this module."""
    return generate.build_warehouse(tmp_path_factory.mktemp("book") / "book.duckdb", rows=MEDIUM)


# ---------------------------------------------------------------- determinism

def test_same_seed_gives_the_same_rows(tmp_path):
    first = generate.build_warehouse(tmp_path / "first.duckdb", rows=SMALL, seed=7)
    second = generate.build_warehouse(tmp_path / "second.duckdb", rows=SMALL, seed=7)
    other = generate.build_warehouse(tmp_path / "other.duckdb", rows=SMALL, seed=8)
    connection = duckdb.connect()
    for name, book in (("first", first), ("second", second), ("other", other)):
        path = str(book.database).replace("'", "''")  # a SQL string literal
        connection.execute(f"ATTACH '{path}' AS {name} (READ_ONLY)")
    # EXCEPT ALL compares NULL with NULL and NaN with NaN as equal, row by row with duplicates
    differ = "SELECT count(*) FROM (SELECT * FROM {a}.{t} EXCEPT ALL SELECT * FROM {b}.{t})"
    for table in ("applications", "development"):
        assert connection.execute(differ.format(a="first", b="second", t=table)).fetchone()[0] == 0
        assert connection.execute(differ.format(a="second", b="first", t=table)).fetchone()[0] == 0
    assert connection.execute(differ.format(a="first", b="other", t="applications")).fetchone()[0] > SMALL / 2
    connection.close()


def test_a_chunk_depends_only_on_seed_and_position():
    months = np.repeat(np.arange(generate.MONTHS), 50)
    once = generate.generate_chunk(11, 3, 1_000, months)
    again = generate.generate_chunk(11, 3, 1_000, months)
    pd.testing.assert_frame_equal(once, again)
    moved = generate.generate_chunk(11, 4, 1_000, months)
    assert not once["bureau_score"].equals(moved["bureau_score"])


# ---------------------------------------------------------------- shape

def test_book_has_every_month_and_unique_ordered_ids(book):
    rows, ids, first_id, last_id = query(book.database, "SELECT count(*), count(DISTINCT application_id), "
                                                       "min(application_id), max(application_id) FROM applications")[0]
    assert rows == ids == MEDIUM == book.rows
    assert last_id - first_id + 1 == MEDIUM
    months = [m for (m,) in query(book.database, "SELECT DISTINCT application_month FROM applications ORDER BY 1")]
    assert len(months) == 30 and months == list(book.months)
    assert all(m.day == 1 for m in months)
    assert all(months_between(a, b) == 1 for a, b in zip(months, months[1:]))
    # ids rise with the month: no id of a month is below an id of an earlier month
    ranges = query(book.database, "SELECT application_month, min(application_id), max(application_id) "
                                  "FROM applications GROUP BY 1 ORDER BY 1")
    assert all(earlier[2] < later[1] for earlier, later in zip(ranges, ranges[1:]))


def test_columns_are_the_documented_ones(book):
    columns = dict(query(book.database, "SELECT column_name, data_type FROM information_schema.columns "
                                        "WHERE table_name = 'applications'"))
    numeric = ["age", "monthly_income", "debt_to_income", "revolving_utilisation", "months_at_address",
               "months_in_job", "enquiries_6m", "delinquencies_24m", "open_accounts", "loan_amount",
               "term_months", "bureau_score"]
    assert set(columns) == {"application_id", "application_month", "product", "region", "channel", "housing",
                            "bad_12m", *numeric}
    assert columns["application_month"] == "DATE"
    assert all(columns[name] in ("INTEGER", "DOUBLE") for name in numeric)
    assert all(columns[name] == "VARCHAR" for name in ("product", "region", "channel", "housing"))


def test_outcomes_are_null_exactly_for_cohorts_younger_than_the_window(book):
    as_of = pd.Timestamp(generate.AS_OF)
    window = pd.DateOffset(months=generate.PERFORMANCE_WINDOW_MONTHS)
    per_month = query(book.database, "SELECT application_month, count(*), count(bad_12m), "
                                     "count(*) FILTER (WHERE bad_12m NOT IN (0, 1)) FROM applications GROUP BY 1")
    mature = immature = 0
    for month, rows, with_outcome, odd in per_month:
        assert odd == 0
        if pd.Timestamp(month) + window <= as_of:
            assert with_outcome == rows, month
            mature += 1
        else:
            assert with_outcome == 0, month
            immature += 1
    assert mature >= 12 and immature >= 1
    assert immature == len(book.immature_months)


def test_development_is_the_earliest_mature_months_with_outcomes(book):
    rows, with_outcome, last_month = query(book.database,
                                           "SELECT count(*), count(bad_12m), max(application_month) FROM development")[0]
    assert rows == with_outcome == book.development_rows > 0
    expected = query(book.database, "SELECT count(*) FROM applications WHERE application_month <= ?", [last_month])
    assert expected[0][0] == rows
    assert months_between(book.months[0], last_month) + 1 == generate.DEVELOPMENT_MONTHS
    assert pd.Timestamp(last_month) + pd.DateOffset(months=generate.PERFORMANCE_WINDOW_MONTHS) <= pd.Timestamp(generate.AS_OF)


def test_missing_values_are_null_and_a_few_nan(book):
    nulls, nans = query(book.database, "SELECT count(*) FILTER (WHERE revolving_utilisation IS NULL), "
                                       "count(*) FILTER (WHERE isnan(revolving_utilisation)) FROM applications")[0]
    assert nulls > 0 and 0 < nans < nulls
    for column in ("monthly_income", "bureau_score", "months_in_job", "months_at_address", "housing"):
        share = query(book.database, f'SELECT avg(CASE WHEN "{column}" IS NULL THEN 1 ELSE 0 END) FROM development')[0][0]
        assert 0 < share < 0.2, column


# ---------------------------------------------------------------- planted drift and incidents

def share_by_period(database: Path, expression: str, since: date) -> tuple[float, float]:
    """The mean of ``expression`` over the development table, and over the book from ``since`` on."""
    before = query(database, f"SELECT avg({expression}) FROM development")[0][0]
    after = query(database, f"SELECT avg({expression}) FROM applications WHERE application_month >= ?", [since])[0][0]
    return before, after


def test_utilisation_income_and_broker_share_drift_after_the_planted_month(book):
    late = generate.add_months(generate.FIRST_MONTH, generate.MONTHS - 6)
    assert late > generate.DRIFT_START
    utilisation = "CASE WHEN isnan(revolving_utilisation) THEN NULL ELSE revolving_utilisation END"
    before, after = share_by_period(book.database, utilisation, late)
    assert after > before + 0.05
    before, after = share_by_period(book.database, "CASE WHEN channel = 'broker' THEN 1.0 ELSE 0.0 END", late)
    assert after > before + 0.08
    income = "SELECT median(monthly_income) FROM {} WHERE application_month {} ?"
    before = query(book.database, income.format("applications", "<"), [generate.DRIFT_START])[0][0]
    after = query(book.database, income.format("applications", ">="), [late])[0][0]
    assert after > before * 1.05
    # and nothing moved inside the development months: first half against second half
    half = generate.add_months(generate.FIRST_MONTH, generate.DEVELOPMENT_MONTHS // 2)
    early = query(book.database, f"SELECT avg({utilisation}) FROM development WHERE application_month < ?", [half])
    later = query(book.database, f"SELECT avg({utilisation}) FROM development WHERE application_month >= ?", [half])
    assert abs(early[0][0] - later[0][0]) < 0.02


def test_event_rate_rises_under_the_planted_stress(book):
    last_mature = max(book.mature_months)
    assert last_mature >= generate.add_months(generate.STRESS_START, 3)
    stressed = query(book.database, "SELECT avg(bad_12m) FROM applications WHERE application_month >= ? "
                                    "AND bad_12m IS NOT NULL", [generate.add_months(generate.STRESS_START, 3)])
    developed = query(book.database, "SELECT avg(bad_12m) FROM development")
    assert stressed[0][0] > developed[0][0] * 1.2


def test_months_in_job_goes_missing_in_the_incident_month_only(book):
    rows = query(book.database, "SELECT application_month, avg(CASE WHEN months_in_job IS NULL THEN 1.0 ELSE 0 END) "
                                "FROM applications GROUP BY 1")
    for month, missing in rows:
        if month == generate.MISSING_JOB_MONTH:
            assert missing > 0.5
        else:
            assert missing < 0.1, month


def test_unseen_channel_appears_in_the_incident_month_only(book):
    rows = dict(query(book.database, "SELECT application_month, avg(CASE WHEN channel = ? THEN 1.0 ELSE 0 END) "
                                     "FROM applications GROUP BY 1", [generate.UNSEEN_CHANNEL]))
    assert rows[generate.UNSEEN_CHANNEL_MONTH] > 0.1
    assert all(share == 0 for month, share in rows.items() if month != generate.UNSEEN_CHANNEL_MONTH)
    spec = api.load_spec(SPEC_V1)
    channel = next(f for f in spec.features if f.name == "channel")
    listed = {v for g in channel.groups for v in g.values} | set(channel.other.values)
    assert generate.UNSEEN_CHANNEL not in listed  # so the spec sends it to its catch-all


# ---------------------------------------------------------------- the row-count guard

@pytest.mark.parametrize("rows", [generate.MIN_ROWS - 1, 0, -5])
def test_too_few_rows_is_an_input_error(tmp_path, capsys, rows):
    assert cli.main(["demo", "--rows", str(rows), "--folder", str(tmp_path)]) == 2
    assert "--rows" in capsys.readouterr().err
    assert not (tmp_path / DATABASE_NAME).exists()


def test_a_file_as_folder_is_an_input_error(tmp_path, capsys):
    blocker = tmp_path / "not_a_folder"
    blocker.write_text("")
    assert cli.main(["demo", "--rows", "5000", "--folder", str(blocker)]) == 2
    assert "is a file, not a folder" in capsys.readouterr().err


# ---------------------------------------------------------------- version 1: bin, review, fit

@pytest.fixture(scope="module")
def developed(tmp_path_factory):
    """The default book, and the demo's development step run on it."""
    folder = tmp_path_factory.mktemp("default")
    default = generate.build_warehouse(folder / "default.duckdb")
    return default, develop.develop(default.database, folder)


def test_the_development_step_reproduces_the_committed_spec(developed):
    _, result = developed
    found = develop.same_as_committed(result.spec_file)
    assert not found, ("demo_warehouse/spec_v1.yaml is no longer what the development step writes; if the change is "
                       "meant, run python -m demo_warehouse.develop --out demo_warehouse/spec_v1.yaml --replace and "
                       "review the diff. First differences: " + "; ".join(found[:5]))


def test_the_comparison_with_the_committed_spec_finds_a_changed_model(developed, tmp_path):
    # a last-bit change passes; a coefficient moved by a millionth, a bin's text or a stamp-free
    # field changed does not
    _, result = developed
    document = yaml.safe_load(result.spec_file.read_text(encoding="utf-8"))
    committed = yaml.safe_load(SPEC_V1.read_text(encoding="utf-8"))
    assert develop.differences(document, committed) == []
    nudged = copy.deepcopy(document)
    nudged["intercept"] = math.nextafter(nudged["intercept"], 0.0)
    nudged["development"]["fitted_at"] = "another time"
    assert develop.differences(nudged, committed) == []
    moved = copy.deepcopy(document)
    moved["features"][0]["coefficient"] *= 1 + 1e-6
    assert [d.split(":")[0] for d in develop.differences(moved, committed)] == ["features[0].coefficient"]
    renamed = copy.deepcopy(document)
    renamed["features"][1]["name"] += "_x"
    assert develop.differences(renamed, committed)


def test_the_committed_bins_are_the_recount_of_the_reviewed_bins(developed):
    # the committed file's counts are those of the recount on the default book (comments aside)
    _, result = developed
    assert api.read_binning(develop.REVIEWED_BINS).fingerprint == result.reviewed.binning.fingerprint
    assert api.read_binning(result.reviewed_file).fingerprint == result.reviewed.binning.fingerprint


def two_digits(value: float) -> float:
    """``value`` to two significant digits, half away from zero (Python's decimal module)."""
    if value == 0 or not math.isfinite(value):
        return value
    exact = Decimal(repr(float(value)))
    place = exact.adjusted() - 1
    return float(exact.scaleb(-place).quantize(Decimal(1), rounding=ROUND_HALF_UP).scaleb(place))


def test_the_reviewed_bins_are_the_proposal_with_the_documented_edits(developed):
    # the edits bins_v1.yaml's opening comments list, and nothing else
    _, result = developed
    proposed = {b.name: b.feature for b in result.proposed.binning.features}
    reviewed = {b.name: b.feature for b in api.read_binning(develop.REVIEWED_BINS).features}
    assert list(reviewed) == list(proposed)
    for name, feature in reviewed.items():
        assert feature.description, name
        was = proposed[name]
        if feature.type == "numeric":
            assert feature.closed == was.closed
            assert [b.upper for b in feature.bins] == [two_digits(b.upper) for b in was.bins], name
            assert [b.lower for b in feature.bins] == [two_digits(b.lower) for b in was.bins], name
        else:
            groups = {g.label: sorted(g.values) for g in feature.groups}
            expected = {g.label: sorted(g.values) for g in was.groups}
            if name == "housing":
                expected["mortgage_or_owner"] = sorted(expected.pop("mortgage") + expected.pop("owner"))
            assert groups == expected, name


def test_version_1_leaves_out_age_and_region_and_keeps_the_review(developed):
    _, result = developed
    spec = api.load_spec(SPEC_V1)
    assert not {"age", "region", "open_accounts"} & {f.name for f in spec.features}
    assert set(spec.development.settings["drop"]) == {"age", "region", "open_accounts"}
    left = {entry.name: entry.reason for entry in result.fit.left_out}
    assert left["age"] == left["region"] == left["open_accounts"] == "dropped by --drop"
    # the review's reason for open_accounts: not significant at 5 % when fitted with the others
    engine = api.open_engine(str(developed[0].database), read_only=True)
    try:
        with_it = api.fit_development(engine, result.reviewed.binning,
                                      dataclasses.replace(develop.SETTINGS, drop=("age", "region"), folds=1),
                                      develop.NAMING, result.spec_file.with_name("with_open_accounts.yaml"))
    finally:
        engine.close()
    open_accounts = next(c for c in with_it.characteristics if c.name == "open_accounts")
    assert open_accounts.p_value > 0.05  # its standard error is checked against statsmodels in tests/develop


# ---------------------------------------------------------------- version 2: version 1 revised

def test_version_2_numbers_follow_from_its_header(developed):
    # The header of spec_v2.yaml says how each new number was made from the default book; each
    # is made again here independently: numpy quantiles, WoE in pandas, and the offset fit by
    # [lib] statsmodels GLM (binomial, logit link, with an offset).
    default, _ = developed
    v1, v2 = api.load_spec(SPEC_V1), api.load_spec(SPEC_V2)
    recent = query_frame(default.database, "SELECT * FROM applications WHERE application_month BETWEEN ? AND ?",
                         [date(2025, 5, 1), date(2025, 11, 1)])
    latest = query_frame(default.database, "SELECT monthly_income FROM applications WHERE application_month "
                                           "BETWEEN ? AND ?", [date(2026, 4, 1), date(2026, 10, 1)])
    assert recent["bad_12m"].notna().all() and len(recent) == 95_146
    y = recent["bad_12m"].to_numpy(dtype=float)
    assert round(100 * y.mean(), 2) == 7.08

    income_v1 = next(f for f in v1.features if f.name == "monthly_income")
    income_v2 = next(f for f in v2.features if f.name == "monthly_income")
    shares = [v1.baseline.feature_shares["monthly_income"][income_v1.bin_label(b)] for b in income_v1.bins]
    below = np.cumsum(shares)[:-1] / sum(shares)
    quantiles = np.quantile(latest["monthly_income"].dropna().to_numpy(), below)
    assert [b.upper for b in income_v2.bins[:-1]] == [two_digits(q) for q in quantiles]
    assert income_v2.coefficient == income_v1.coefficient

    def woe(feature, column):
        places = bin_index(feature, values(recent[column]))
        frame = pd.DataFrame({"bin": places, "y": y})
        counts = frame.groupby("bin")["y"].agg(events="sum", rows="count").reindex(
            range(len(feature.bins) + 1), fill_value=0)
        good = (counts["rows"] - counts["events"]) / (len(y) - y.sum())
        bad = counts["events"] / y.sum()
        return np.where(counts["rows"] > 0, np.log(good / bad), 0.0)  # no bin here lacks events or non-events

    expected = woe(income_v2, "monthly_income")
    np.testing.assert_allclose([b.woe for b in income_v2.bins] + [income_v2.missing.woe], expected, atol=6e-7)
    open_accounts = next(f for f in v2.features if f.name == "open_accounts")
    reviewed = api.read_binning(develop.REVIEWED_BINS).feature("open_accounts").feature
    assert [(b.lower, b.upper) for b in open_accounts.bins] == [(b.lower, b.upper) for b in reviewed.bins]
    expected = woe(open_accounts, "open_accounts")
    np.testing.assert_allclose([b.woe for b in open_accounts.bins] + [open_accounts.missing.woe], expected, atol=6e-7)

    offset = sum(f.coefficient * fitdata.numpy_woe(f, values(recent[f.column or f.name]))
                 for f in v2.features if f.name != "open_accounts")
    design = np.column_stack([np.ones(len(y)), fitdata.numpy_woe(open_accounts, values(recent["open_accounts"]))])
    fit = statsmodels_api.GLM(y, design, family=statsmodels_api.families.Binomial(), offset=offset).fit(tol=1e-12)
    assert v2.intercept == pytest.approx(fit.params[0], abs=6e-7)
    assert open_accounts.coefficient == pytest.approx(fit.params[1], abs=6e-7)
    assert round(fit.bse[1], 3) == 0.036
    assert not {f.name for f in v2.features} ^ ({f.name for f in v1.features} - {"channel"} | {"open_accounts"})


def bin_index(feature, column_values) -> np.ndarray:
    """Each value's bin of a numeric spec feature with bins (lower, upper], the missing bin last."""
    assert feature.closed == "upper"
    uppers = np.array([b.upper for b in feature.bins[:-1]])
    return np.array([len(feature.bins) if v is None else int(np.searchsorted(uppers, v, side="left"))
                     for v in column_values])


def values(column: pd.Series) -> list:
    """A column's values with NULL and NaN as None (what the reference binner takes)."""
    return [None if value is pd.NA or value is None or (isinstance(value, float) and math.isnan(value)) else value
            for value in column.astype(object)]


def query_frame(database: Path, sql: str, parameters=()) -> pd.DataFrame:
    connection = duckdb.connect(str(database), read_only=True)
    try:
        return connection.execute(sql, list(parameters)).df()
    finally:
        connection.close()


def test_committed_spec_checks_and_uses_the_book_columns(book):
    spec = api.load_spec(SPEC_V1)
    assert spec.model.performance_window_months == generate.PERFORMANCE_WINDOW_MONTHS
    columns = {name for (name,) in query(book.database, "SELECT column_name FROM information_schema.columns "
                                                        "WHERE table_name = 'applications'")}
    assert {f.column or f.name for f in spec.features} <= columns
    assert not {"age", "region"} & {f.name for f in spec.features}


# ---------------------------------------------------------------- end to end

def test_demo_runs_end_to_end_and_scores_every_row(tmp_path, capsys):
    assert cli.main(["demo", "--rows", "20000", "--folder", str(tmp_path)]) == 0
    printed = capsys.readouterr().out
    database = tmp_path / DATABASE_NAME
    assert str(database) in printed
    assert "20,000" in printed
    assert " ".join(CAUTIONS.split()[:6]) in " ".join(printed.split())
    # fits 80 columns, except a path too long for one line, which is kept whole to be copied
    assert all(len(line) <= 80 for line in printed.splitlines() if str(tmp_path) not in line)
    applications, scored, matched, complete = query(database, f"""
        SELECT (SELECT count(*) FROM applications),
               (SELECT count(*) FROM {SCORED}),
               (SELECT count(*) FROM applications a JOIN {SCORED} s
                   ON a.application_id = s.application_id AND a.application_month = s.application_month),
               (SELECT count(*) FROM {SCORED} WHERE score IS NOT NULL AND pd > 0 AND pd < 1 AND grade IS NOT NULL)
    """)[0]
    assert applications == scored == matched == complete == 20_000
    # the development step: `bin` and `fit` on the development table wrote a binning file and a spec
    fitted = api.load_spec(tmp_path / FITTED_SPEC_FILE)
    assert fitted.development.table == "development" and fitted.development.rows > 0
    assert {"age", "region"}.isdisjoint(f.name for f in fitted.features)
    assert "develop version 1: bin, review, fit" in printed and "held-out folds" in printed
    grades = dict(query(database, f"SELECT grade, count(*) FROM {SCORED} GROUP BY 1"))
    spec = api.load_spec(SPEC_V1)
    assert set(grades) <= {g.name for g in spec.grades}
    for grade, rows in grades.items():
        assert f"{rows:,}" in printed, grade


def test_demo_without_folder_keeps_a_temporary_one_and_names_it(tmp_path, monkeypatch, capsys):
    monkeypatch.setattr("tempfile.tempdir", str(tmp_path))
    assert cli.main(["demo", "--rows", "5000"]) == 0
    printed = capsys.readouterr().out
    made = [p for p in tmp_path.iterdir() if p.is_dir()]
    assert len(made) == 1 and (made[0] / DATABASE_NAME).exists()
    assert str(made[0] / DATABASE_NAME) in printed
