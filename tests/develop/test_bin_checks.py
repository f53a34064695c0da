"""Bad input to `scoremon bin` (and `fit`, which runs the same checks): one line before any
work, naming the column and the counts; and the command's own output and exit codes."""
from __future__ import annotations

import duckdb
import numpy as np
import pandas as pd
import pytest

from scoremon import api
from scoremon.cli import main
from scoremon.develop.binning_file import Settings, read_binning
from scoremon.develop.outcome import plan_columns
from scoremon.engines.protocol import NUMERIC, Column
from scoremon.engines import open_engine
from scoremon.errors import InputError


def database(tmp_path, frame: pd.DataFrame, name: str = "development") -> str:
    path = str(tmp_path / "dev.duckdb")
    connection = duckdb.connect(path)
    connection.register("frame", frame)
    connection.execute(f'CREATE OR REPLACE TABLE "{name}" AS SELECT * FROM frame')
    connection.close()
    return path


def good_frame(rows: int = 400, seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    score = rng.normal(size=rows)
    return pd.DataFrame({"application_id": np.arange(rows), "score": score,
                         "bad": (rng.random(rows) < 1 / (1 + np.exp(1 + score))).astype(int),
                         "month": pd.Timestamp("2025-01-15") + pd.to_timedelta(rng.integers(0, 90, rows), unit="D")})


@pytest.mark.parametrize("values, message", [
    ([0, 1, 2, 1], "of 4 rows 1 holds other values (2)"),
    ([0, 1, -1, 1], "of 4 rows 1 holds other values (-1)"),
    ([0.0, 1.0, 0.5, 1.0], "of 4 rows 1 holds other values (0.5)"),
    ([0, 1, 2, -1], "of 4 rows 2 hold other values (from -1 to 2)"),
    ([0, 1, None, 1], "of 4 rows 1 is NULL"),
])
def test_outcome_other_than_zero_and_one(tmp_path, values, message):
    frame = pd.DataFrame({"score": [1.0, 2.0, 3.0, 4.0], "bad": values})
    with open_engine(database(tmp_path, frame)) as engine:
        with pytest.raises(InputError) as caught:
            api.bin_development(engine, "development", "bad")
    assert str(caught.value) == (f"outcome column 'bad' must hold only 0 and 1: {message}; recode it to 0/1 or "
                                 "leave those rows out of the development table")


def test_nan_outcome_is_another_value_not_null(tmp_path):
    with open_engine(str(tmp_path / "nan.duckdb")) as engine:
        # write_rows keeps NaN apart from NULL (a pandas frame would turn NaN into NULL)
        engine.write_rows(["development"], [("score", "DOUBLE"), ("bad", "DOUBLE")],
                          [(1.0, 0.0), (2.0, 1.0), (3.0, float("nan")), (4.0, 1.0)], "loading rows")
        with pytest.raises(InputError, match=r"of 4 rows 1 holds other values \(nan\);"):
            api.bin_development(engine, "development", "bad")


def test_text_outcome_and_one_sided_outcome(tmp_path):
    frame = pd.DataFrame({"score": [1.0, 2.0], "bad": ["0", "1"], "never": [0, 0]})
    with open_engine(database(tmp_path, frame)) as engine:
        with pytest.raises(InputError, match=r"outcome column 'bad' is VARCHAR \(text\); it must hold 1"):
            api.bin_development(engine, "development", "bad")
        with pytest.raises(InputError, match="outcome column 'never' has 0 events and 2 non-events in 2 rows"):
            api.bin_development(engine, "development", "never", features=["score"])


def test_duplicated_and_null_keys(tmp_path):
    frame = good_frame()
    frame.loc[5, "application_id"] = 7
    frame.loc[9, "application_id"] = 7
    with open_engine(database(tmp_path, frame)) as engine:
        with pytest.raises(InputError) as caught:
            api.bin_development(engine, "development", "bad", key="application_id")
    assert str(caught.value) == ("key column 'application_id' is not unique: 2 of 400 rows repeat a key (e.g. 7 on "
                                 "3 rows); give a unique key or none")
    frame = good_frame()
    frame["application_id"] = frame["application_id"].astype(object)
    frame.loc[3, "application_id"] = None
    with open_engine(database(tmp_path, frame)) as engine:
        with pytest.raises(InputError, match="key column 'application_id' is NULL on 1 of 400 rows"):
            api.bin_development(engine, "development", "bad", key="application_id")


@pytest.mark.parametrize("options, message", [
    ({"outcome": "bda"}, "outcome column 'bda' is not in table development; did you mean 'bad'?"),
    ({"key": "application"}, "key column 'application' is not in table development; did you mean 'application_id'?"),
    ({"month_column": "monht"}, "month column 'monht' is not in table development; did you mean 'month'?"),
    ({"features": ["scor"]}, "feature column 'scor' is not in table development; did you mean 'score'?"),
    ({"features": ["bad"]}, "feature column 'bad' is the outcome column; leave it out of --features"),
    ({"exclude": ["scores"]}, "--exclude column 'scores' is not in table development; did you mean 'score'?"),
])
def test_columns_that_do_not_exist_or_play_two_parts(tmp_path, options, message):
    with open_engine(database(tmp_path, good_frame())) as engine:
        with pytest.raises(InputError) as caught:
            api.bin_development(engine, "development", **{"outcome": "bad", **options})
    assert str(caught.value) == message


def test_a_bin_without_events_gets_the_half_count_rule(tmp_path):
    # The top fifth of scores has no events at all; with min_events 0 it may stand as a bin.
    frame = good_frame(rows=1000)
    frame.loc[frame["score"] > frame["score"].quantile(0.8), "bad"] = 0
    with open_engine(database(tmp_path, frame)) as engine:
        report = api.bin_development(engine, "development", "bad", features=["score"],
                                     settings=Settings(min_events=0, trend="none"))
    binned = report.binning.feature("score")
    empty = [c for c in binned.counts if c.events == 0 and c.rows > 0]
    assert empty, "expected a bin without events"
    events, non_events = report.binning.events, report.binning.rows - report.binning.events
    for count in empty:  # WoE = ln(((n + 0.5)/N) / (0.5/E)), the rule stated in the README
        assert count.woe == pytest.approx(np.log(((count.rows + 0.5) / non_events) / (0.5 / events)), abs=1e-6)


def test_iv_of_two_normals_one_apart_is_near_one_through_the_engine(tmp_path):
    # From memory (CHECKS.md §2): equal-variance normals with mean gap D = 1 have IV → D² = 1 as
    # bins get finer. 100 fine classes of 200,000 rows lose a little to binning and sampling.
    rng = np.random.default_rng(2026)
    events = rng.normal(0.0, 1.0, 100_000)
    non_events = rng.normal(1.0, 1.0, 100_000)
    frame = pd.DataFrame({"score": np.concatenate([events, non_events]),
                          "bad": np.concatenate([np.ones(100_000, int), np.zeros(100_000, int)])})
    settings = Settings(fine_classes=100, min_share=0.0, min_events=0, trend="none", max_bins=100)
    with open_engine(database(tmp_path, frame)) as engine:
        report = api.bin_development(engine, "development", "bad", settings=settings)
    assert report.binning.feature("score").iv == pytest.approx(1.0, abs=0.03)


def test_command_writes_summarises_and_never_overwrites(tmp_path, capsys):
    db = database(tmp_path, good_frame())
    out = tmp_path / "bins.yaml"
    code = main(["bin", "--db", db, "--table", "development", "--outcome", "bad", "--key", "application_id",
                 "--month-column", "month", "--out", str(out)])
    printed = capsys.readouterr()
    assert code == 0, printed.err
    binning = read_binning(out)
    assert (binning.rows, binning.months, binning.key) == (400, ("2025-01", "2025-04"), "application_id")
    assert "binned: table development on duckdb, 400 rows" in printed.out
    assert "IV > 0.5: possible leakage" in printed.out  # score's IV is about 0.6 in this sample
    assert f"(fingerprint {binning.fingerprint})" in printed.out
    assert "Decision support, not an automatic decision" in printed.out
    assert all(len(line) <= 80 for line in printed.out.splitlines())
    before = out.read_text()
    code = main(["bin", "--db", db, "--table", "development", "--outcome", "bad", "--out", str(out)])
    assert code == 2
    assert capsys.readouterr().err.strip() == (f"error: --out {out} exists; give --replace to replace it, or "
                                               "choose another name")
    assert out.read_text() == before


def test_command_recounts_an_edited_file(tmp_path, capsys):
    db = database(tmp_path, good_frame())
    first = tmp_path / "bins.yaml"
    assert main(["bin", "--db", db, "--table", "development", "--outcome", "bad", "--key", "application_id",
                 "--out", str(first), "--min-events", "5"]) == 0
    binning = read_binning(first)
    bins = binning.feature("score").feature.bins
    lines = first.read_text().splitlines()
    at = next(i for i, line in enumerate(lines) if "{lower: -.inf" in line)
    lines[at] = f"      - {{lower: -.inf, upper: {bins[1].upper!r}}}"  # the two lowest bins merged
    del lines[at + 1]
    edited = tmp_path / "edited.yaml"
    edited.write_text("\n".join(lines) + "\n")
    second = tmp_path / "recounted.yaml"
    capsys.readouterr()
    assert main(["bin", "--recount", str(edited), "--db", db, "--out", str(second)]) == 0
    assert " ".join(capsys.readouterr().out.split()).startswith(f"recounted {edited}: table development")
    recounted = read_binning(second).feature("score")
    assert len(recounted.feature.bins) == len(bins) - 1
    assert recounted.counts[0].rows == binning.feature("score").counts[0].rows + \
        binning.feature("score").counts[1].rows


def test_recount_errors_name_file_and_line(tmp_path, capsys):
    db = database(tmp_path, good_frame())
    first = tmp_path / "bins.yaml"
    assert main(["bin", "--db", db, "--table", "development", "--outcome", "bad", "--key", "application_id",
                 "--out", str(first)]) == 0
    lines = first.read_text().splitlines()
    at = next(i for i, line in enumerate(lines) if "{lower: -.inf" in line)
    lines[at] = lines[at].replace("{lower: -.inf", "{lower: -5")
    first.write_text("\n".join(lines) + "\n")
    capsys.readouterr()
    assert main(["bin", "--recount", str(first), "--db", db, "--out", str(tmp_path / "new.yaml")]) == 2
    error = capsys.readouterr().err.strip()
    assert error.startswith(f"{first}:{at + 1}:")
    assert "the lowest bin starts at -5, leaving lower values nowhere; set its lower edge to -.inf" in error


def test_recount_names_a_feature_column_the_table_lacks(tmp_path, capsys):
    db = database(tmp_path, good_frame())
    first = tmp_path / "bins.yaml"
    assert main(["bin", "--db", db, "--table", "development", "--outcome", "bad", "--key", "application_id",
                 "--out", str(first)]) == 0
    first.write_text(first.read_text().replace("  - name: score\n", "  - name: score\n    column: scores\n"))
    capsys.readouterr()
    assert main(["bin", "--recount", str(first), "--db", db, "--out", str(tmp_path / "new.yaml")]) == 2
    assert capsys.readouterr().err.strip() == (f"error: column 'scores' (feature 'score' of {first}) is not in table "
                                               "development; did you mean 'score'?")


def test_hostile_names_and_values_survive_bin_and_recount(tmp_path, capsys):
    rng = np.random.default_rng(5)
    frame = pd.DataFrame({'x"; DROP TABLE t; --': rng.normal(size=600), "Age": rng.normal(size=600),
                          "trailing ": rng.normal(size=600),
                          "kind": rng.choice(["a'b", 'c"d', "e: f", "other", "missing", ""], size=600),
                          "bad": (rng.random(600) < 0.3).astype(int)})
    db = database(tmp_path, frame)
    first, second = tmp_path / "bins.yaml", tmp_path / "again.yaml"
    assert main(["bin", "--db", db, "--table", "development", "--outcome", "bad", "--out", str(first),
                 "--min-events", "5"]) == 0
    printed = capsys.readouterr().out
    assert "not binned: its name starts or ends" in printed
    binning = read_binning(first)
    kind = binning.feature("kind").feature
    assert sorted(v for g in kind.groups for v in g.values) == ["", "a'b", 'c"d', "e: f", "missing", "other"]
    assert {g.label for g in kind.groups} >= {"other (2)", "missing (2)", "''"}
    assert main(["bin", "--recount", str(first), "--db", db, "--out", str(second)]) == 0
    assert read_binning(second).features == binning.features


def test_names_equal_but_for_case_get_their_own_feature_names():
    # PostgreSQL and Spark keep quoted names apart by case; a spec compares names ignoring case
    columns = {name: Column(name, NUMERIC, "DOUBLE") for name in ("age", "Age", "AGE_2", "bad")}
    plan = plan_columns(columns, "development", "bad")
    assert plan.numeric == ("age", "Age", "AGE_2")
    assert [plan.feature_name(c) for c in plan.numeric] == ["age", "Age_2", "AGE_2_2"]


def test_recount_flags_a_bin_an_edit_left_small(tmp_path):
    db = database(tmp_path, good_frame())
    first = tmp_path / "bins.yaml"
    assert main(["bin", "--db", db, "--table", "development", "--outcome", "bad", "--key", "application_id",
                 "--out", str(first)]) == 0
    binning = read_binning(first)
    upper = binning.feature("score").feature.bins[0].upper
    lines = first.read_text().splitlines()
    at = next(i for i, line in enumerate(lines) if "{lower: -.inf" in line)
    lines[at:at + 1] = ["      - {lower: -.inf, upper: -2.5}", f"      - {{lower: -2.5, upper: {upper!r}}}"]
    edited = read_binning_text_from(lines, tmp_path)
    with open_engine(db) as engine:
        report = api.recount_binning(engine, edited)
    assert report.notes["score"] == ("under 5% of rows or 30 events: (-inf, -2.5]",)


def read_binning_text_from(lines, folder):
    path = folder / "edited.yaml"
    path.write_text("\n".join(lines) + "\n")
    return read_binning(path, counted=False)


@pytest.mark.parametrize("option, value, message", [
    ("--min-share", "1.5", "minimum share 1.5: give a share from 0 to below 1, e.g. 0.05"),
    ("--fine-classes", "500", "fine classes 500: give a whole number from 2 to 100"),
    ("--min-events", "-1", "minimum events -1: give 0 or more"),
    ("--max-bins", "0", "maximum bins 0: give 1 or more"),
])
def test_settings_out_of_range_are_refused_before_any_work(tmp_path, capsys, option, value, message):
    db = database(tmp_path, good_frame())
    assert main(["bin", "--db", db, "--table", "development", "--outcome", "bad", "--out",
                 str(tmp_path / "b.yaml"), option, value]) == 2
    assert capsys.readouterr().err.strip() == f"error: {message}"
    assert not (tmp_path / "b.yaml").exists()


def test_progress_runs_from_start_to_whole(tmp_path):
    shares = []
    with open_engine(database(tmp_path, good_frame())) as engine:
        api.bin_development(engine, "development", "bad", key="application_id", progress=shares.append)
    assert shares and shares == sorted(shares) and shares[-1] == 1.0
