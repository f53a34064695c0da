"""`bin` on every engine: quantile edges as numpy states them, counts as pandas counts them,
the same binning file on DuckDB, PostgreSQL and Spark, and the recount of an edited file."""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from scoremon import api
from scoremon.develop.binning_file import Settings, read_binning_text, binning_text
from scoremon.develop.fine import candidate_query, checked_classes, count_special, fine_classes, numeric_classes
from scoremon.develop.outcome import event_expression
from scoremon.engines import DuckDBEngine
from scoremon.engines.protocol import INTEGER, Column
from scoremon.trees import table_path

ROWS = 1009  # prime, so n·k/20 is never whole (see test_quantile_edges_equal_numpys_inverted_cdf)
COLUMNS = [("application_id", "BIGINT"), ("bad", "BIGINT"), ("score", "DOUBLE"), ("dependants", "BIGINT"),
           ("housing", "VARCHAR"), ("constant", "DOUBLE"), ("nothing", "DOUBLE")]


def development_rows(seed: int = 14) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    score = np.round(rng.normal(0, 1, ROWS), 1)  # rounded: many ties
    bad = (rng.random(ROWS) < 1 / (1 + np.exp(1.5 + 1.2 * score))).astype(int)
    frame = pd.DataFrame({
        "application_id": np.arange(ROWS), "bad": bad, "score": score,
        "dependants": rng.choice([0, 1, 2, 3], size=ROWS, p=[0.55, 0.25, 0.15, 0.05]),
        "housing": rng.choice(["renting", "owner", "family", "council", "boat"], size=ROWS,
                              p=[0.4, 0.35, 0.15, 0.08, 0.02]).astype(object),
        "constant": 7.0, "nothing": None})
    frame["score"] = frame["score"].astype(object)
    for position, value in SPECIAL.items():
        frame.at[position, "score"] = value  # 4 NULL, 3 NaN, 3 +inf, 2 −inf: 997 finite values (a prime)
    frame.loc[[20, 21, 22], "housing"] = None
    return frame


SPECIAL = {0: None, 1: None, 8: None, 9: None, 2: math.nan, 3: math.nan, 4: math.nan, 5: math.inf, 6: math.inf,
           11: math.inf, 7: -math.inf, 10: -math.inf}


def load(engine, frame: pd.DataFrame, name: str = "development") -> None:
    rows = []
    for record in frame.to_dict("records"):
        row = []
        for column, kind in COLUMNS:
            value = record[column]
            if kind == "BIGINT":
                value = int(value)
            elif kind == "VARCHAR":
                value = value if isinstance(value, str) else None
            elif value is not None:
                value = float(value)
            row.append(value)
        rows.append(row)
    engine.write_rows([name], COLUMNS, rows, "loading the development rows")


def test_quantile_edges_equal_numpys_inverted_cdf(each_engine):
    # External check: numpy.quantile(method="inverted_cdf"), the smallest x with F(x) ≥ p.
    # numpy forms n·p in floating point, so where n·k/20 is a whole number it can step to the
    # next value (n = 100, p = 0.55 gives the 56th); with n prime that never happens.
    frame = development_rows()
    load(each_engine, frame)
    source = table_path(["development"])
    event = event_expression(Column("bad", INTEGER, "BIGINT"))
    total, special = count_special(each_engine, source, ["score", "dependants"], event)
    assert total == ROWS
    checked = fine_classes(each_engine, source, ["score", "dependants"], [], event, 20)
    for name, quick in zip(("score", "dependants"), checked):
        # both routes: the engine's percentiles checked in whole numbers, and the running-sum query
        for classes in (quick, numeric_classes(each_engine, source, name, event, 20, special[name])):
            values = pd.to_numeric(frame[name], errors="coerce").astype(float)
            finite = values[np.isfinite(values)]
            quantiles = np.quantile(finite.to_numpy(), [k / 20 for k in range(1, 20)], method="inverted_cdf")
            expected = sorted(set(quantiles.tolist()) - {finite.max()})  # tied quantiles once; none at the top
            assert list(classes.edges) == expected
            # each class (e[k-1], e[k]] counted as pandas counts it (pd.cut, right-closed)
            cut = pd.cut(finite, [-math.inf] + expected + [math.inf], right=True)
            by_class = frame.loc[finite.index].groupby(cut, observed=False)["bad"].agg(["count", "sum"])
            assert list(classes.rows) == by_class["count"].tolist()
            assert list(classes.events) == by_class["sum"].tolist()
    # a candidate one rank off fails the whole-number check (and the running-sum query takes over):
    # 97 distinct values, so rank t + 1 never holds the value of rank t
    each_engine.write_rows(["distinct"], [("x", "DOUBLE"), ("bad", "BIGINT")], [(float(i), i % 2) for i in range(97)],
                           "loading distinct values")
    off = [float(-(-k * 97 // 20)) for k in range(1, 20)]  # the value of rank t is t − 1; this is rank t + 1
    nothing = {kind: (0, 0) for kind in ("missing", "nan", "positive_infinity", "negative_infinity")}
    assert checked_classes(each_engine, table_path(["distinct"]), "x", event, 20, nothing, 97, off, 0.0, 96.0) is None
    exact = [value - 1 for value in off]
    assert checked_classes(each_engine, table_path(["distinct"]), "x", event, 20, nothing, 97, exact, 0.0,
                           96.0).edges == tuple(exact)
    special = count_special(each_engine, source, ["score"], event)[1]["score"]
    assert special == {"missing": (4, int(frame.loc[[0, 1, 8, 9], "bad"].sum())),
                       "nan": (3, int(frame.loc[[2, 3, 4], "bad"].sum())),
                       "positive_infinity": (3, int(frame.loc[[5, 6, 11], "bad"].sum())),
                       "negative_infinity": (2, int(frame.loc[[7, 10], "bad"].sum()))}


def test_every_engine_writes_the_same_binning(each_engine):
    frame = development_rows()
    load(each_engine, frame)
    settings = Settings(min_share=0.05, min_events=5)
    found = api.bin_development(each_engine, "development", "bad", key="application_id", settings=settings)
    reference_engine = DuckDBEngine(":memory:")
    try:
        load(reference_engine, frame)
        reference = api.bin_development(reference_engine, "development", "bad", key="application_id",
                                        settings=settings)
    finally:
        reference_engine.close()
    assert found.binning.features == reference.binning.features
    assert binning_text(found.binning).replace(each_engine.dialect, "duckdb") == binning_text(reference.binning)
    notes = found.notes
    assert notes["constant"][0] == "constant in the sample (7): one bin"
    assert notes["nothing"] == ("all missing in the sample: left out",)
    assert [f.name for f in found.binning.features] == ["score", "dependants", "constant", "housing"]


def test_recount_counts_edited_bins_as_written(each_engine):
    frame = development_rows()
    load(each_engine, frame)
    report = api.bin_development(each_engine, "development", "bad", settings=Settings(min_share=0.05, min_events=5))
    text = binning_text(report.binning)
    score = report.binning.feature("score").feature
    # the modeller merges the two lowest bins and rounds the next edge, and moves 'boat' into a group
    first, second = score.bins[0], score.bins[1]
    old = f"upper: {_shown(first.upper)}, rows"
    assert old in text
    lines = text.splitlines()
    at = next(i for i, line in enumerate(lines) if line.strip().startswith("- {lower: -.inf") and "upper: " +
              _shown(first.upper) in line)
    lines[at] = f"      - {{lower: -.inf, upper: {_shown(second.upper)}}}"
    del lines[at + 1]
    edited = read_binning_text("\n".join(lines) + "\n", "edited.yaml", counted=False)
    recount = api.recount_binning(each_engine, edited).binning
    bins = recount.feature("score").feature.bins
    assert (bins[0].lower, bins[0].upper) == (-math.inf, second.upper)
    # expected by pandas: rows with score ≤ the edge, −inf included (the spec's default route)
    values = pd.to_numeric(frame["score"], errors="coerce").astype(float)
    low = frame[(values <= second.upper) & ~values.isna()]
    counts = recount.feature("score").counts
    assert (counts[0].rows, counts[0].events) == (len(low), int(low["bad"].sum()))
    missing = frame[values.isna()]  # NULL and NaN
    assert (counts[-1].rows, counts[-1].events) == (len(missing), int(missing["bad"].sum()))
    assert sum(c.rows for c in counts) == ROWS


def _shown(value: float) -> str:
    return str(int(value)) if float(value).is_integer() else repr(float(value))


def test_small_table_worked_by_hand(each_engine):
    # Worked by hand (the same three bins as tests/develop/test_woe.py): renting 10 rows / 2 events,
    # owner 10 / 5, family 5 / 0; totals 25 rows, 7 events, 18 non-events. With no minimum share
    # or events every value keeps its own group (splitting never lowers IV), ordered by WoE:
    # owner ln(7/18) = −0.944462, renting ln(14/9) = 0.441833, family (0.5 added to both counts)
    # ln(77/18) = 1.453434; IV = 0.412265 + 0.070132 + 0.340288 = 0.822685.
    values = ["renting"] * 10 + ["owner"] * 10 + ["family"] * 5
    bad = [1, 1] + [0] * 8 + [1] * 5 + [0] * 5 + [0] * 5
    each_engine.write_rows(["tiny"], [("housing", "VARCHAR"), ("bad", "BIGINT")], list(zip(values, bad)),
                           "loading the hand-worked table")
    report = api.bin_development(each_engine, "tiny", "bad", settings=Settings(min_share=0.0, min_events=0))
    housing = report.binning.feature("housing")
    assert [(c.label, c.rows, c.events, c.woe) for c in housing.counts] == [
        ("owner", 10, 5, -0.944462), ("renting", 10, 2, 0.441833), ("family", 5, 0, 1.453434),
        ("other", 0, 0, 0.0), ("missing", 0, 0, 0.0)]
    assert housing.iv == pytest.approx(0.822685, abs=2e-6)


def test_engine_percentiles_pass_the_whole_number_check(each_engine):
    # The quick route: DuckDB's QUANTILE_DISC and PostgreSQL's PERCENTILE_DISC are exact, so their
    # candidates pass the check; Spark's PERCENTILE_APPROX is exact on a table this small (its
    # default accuracy, 10,000, exceeds the rows), so it passes too here.
    frame = development_rows()
    load(each_engine, frame)
    source = table_path(["development"])
    event = event_expression(Column("bad", INTEGER, "BIGINT"))
    total, special = count_special(each_engine, source, ["score"], event)
    finite = 997
    probabilities = [[(-(-k * finite // 20) - 0.5) / finite for k in range(1, 20)]]
    row = each_engine.query(candidate_query(source, ["score"], probabilities), "candidates")[0]
    checked = checked_classes(each_engine, source, "score", event, 20, special["score"], finite, list(row["q_0"]),
                              row["min_0"], row["max_0"])
    assert checked is not None
    assert checked == numeric_classes(each_engine, source, "score", event, 20, special["score"])


def test_whole_number_codes_binned_as_categories(each_engine):
    # region codes 1…4 (4 rare): as categories, each code its own group or the catch-all, and a
    # recount reads them back as whole numbers
    rng = np.random.default_rng(8)
    region = rng.choice([1, 2, 3, 4], size=600, p=[0.5, 0.3, 0.18, 0.02])
    bad = (rng.random(600) < np.array([0.1, 0.2, 0.3, 0.3])[region - 1]).astype(int)
    each_engine.write_rows(["coded"], [("region", "BIGINT"), ("bad", "BIGINT")],
                           [(int(r), int(b)) for r, b in zip(region, bad)], "loading region codes")
    report = api.bin_development(each_engine, "coded", "bad", settings=Settings(min_events=5),
                                 categorical=["region"])
    feature = report.binning.feature("region").feature
    assert feature.type == "categorical" and feature.other.values == [4]
    assert sorted(v for g in feature.groups for v in g.values) == [1, 2, 3]
    counts = {g.values[0]: c for g, c in zip(feature.groups, report.binning.feature("region").counts)}
    for code in (1, 2, 3):  # counted as pandas counts them
        assert (counts[code].rows, counts[code].events) == (int((region == code).sum()), int(bad[region == code].sum()))
    again = api.recount_binning(each_engine, read_binning_text(binning_text(report.binning), "coded.yaml"))
    assert again.binning.features == report.binning.features


def test_recount_honours_a_nan_route_the_modeller_adds(each_engine):
    # The spec's `nan:` key sends NaN to a named bin instead of the missing bin; a recount counts it there.
    frame = development_rows()
    load(each_engine, frame)
    report = api.bin_development(each_engine, "development", "bad", settings=Settings(min_share=0.05, min_events=5))
    score = report.binning.feature("score")
    top = score.feature.bin_label(score.feature.bins[-1])
    text = binning_text(report.binning).replace("  - name: score\n", f"  - name: score\n    nan: {top!r}\n", 1)
    again = api.recount_binning(each_engine, read_binning_text(text, "routed.yaml", counted=False)).binning
    before, after = score.counts, again.feature("score").counts
    nan_rows = (3, int(frame.loc[[2, 3, 4], "bad"].sum()))  # rows 2, 3, 4 hold NaN
    assert (after[-2].rows, after[-2].events) == (before[-2].rows + nan_rows[0], before[-2].events + nan_rows[1])
    assert (after[-1].rows, after[-1].events) == (before[-1].rows - nan_rows[0], before[-1].events - nan_rows[1])


def test_repeated_keys_are_counted_alike_on_every_engine(each_engine):
    # the key check sorts the keys and counts rows equal to the previous one (a window, which
    # spills, instead of COUNT(DISTINCT)); pandas' duplicated() is the reference. Whole-number
    # and text keys, with a key given three times and one twice
    from scoremon.develop.outcome import repeated_keys_query

    frame = development_rows()
    frame.loc[[5, 9], "application_id"] = 7
    frame.loc[[40], "application_id"] = 300
    frame["housing"] = [f"K{i % 1000:04d}" for i in range(ROWS)]  # text keys: 9 given twice
    load(each_engine, frame)
    source = table_path(["development"])
    for key in ("application_id", "housing"):
        found = each_engine.query(repeated_keys_query(source, key), "counting the repeated keys")[0]["repeated"]
        assert int(found) == int(frame[key].duplicated().sum())
