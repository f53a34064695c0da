"""Wide models: every query `bin` and `fit` build stays within the columns one PostgreSQL SELECT
may list, the queries cut to stay there give the sums of the whole, and a fit of 60
characteristics gives the same coefficients on DuckDB and on PostgreSQL.

The limit checked against is PostgreSQL's own (its documentation, Appendix K "PostgreSQL
Limits": 1,664 columns in a result set); the columns of each SELECT are counted here from the
sqlglot tree (a ``*`` counts as one: it only ever reads a counted SELECT or a table). Spark is
left out of the engine tests for time: a query of 1,600 sums takes it most of a minute to plan
and run even on a few hundred rows.
"""
from __future__ import annotations

import dataclasses
from collections import Counter

import numpy as np
import pytest
from sqlglot import exp

from scoremon import api
from scoremon.develop.binning import count_bins
from scoremon.develop.binning_file import BinnedFeature
from scoremon.develop.design import (GRADIENT, LOSS, MAX_CHARACTERISTICS, Design, EnginePasses, moment_queries,
                                     pass_blocks, pass_query, pass_width)
from scoremon.develop.folds import fold_of
from scoremon.develop.newton import DensePasses
from scoremon.develop.outcome import describe_columns, plan_columns
from scoremon.develop.records import FitSettings
from scoremon.develop.spec_writer import Naming
from scoremon.develop import width
from scoremon.develop.width import MAX_COLUMNS
from scoremon.errors import InputError
from scoremon.trees import column
from tests.conftest import open_test_engine
from tests.develop import fitdata

POSTGRES_SELECT_LIMIT = 1664  # PostgreSQL documentation, Appendix K: columns in a result set
K = 3


def widths(tree: exp.Expression) -> list[int]:
    """The columns each SELECT in ``tree`` lists."""
    return [len(select.expressions) for select in tree.find_all(exp.Select)]


def outer_names(tree: exp.Select) -> list[str]:
    return [e.alias_or_name for e in tree.expressions]


class Recording:
    """An engine that notes the widest SELECT of every tree it is handed, with its purpose."""

    def __init__(self, engine):
        self.engine = engine
        self.seen: list[tuple[int, str]] = []

    def __getattr__(self, name):
        found = getattr(self.engine, name)
        if not callable(found):
            return found

        def noted(*args, **kwargs):
            for value in list(args) + list(kwargs.values()):
                for tree in value if isinstance(value, (list, tuple)) else [value]:
                    if isinstance(tree, exp.Expression):
                        purpose = next((a for a in args if isinstance(a, str)), name)
                        self.seen.append((max(widths(tree), default=0), purpose))
            return found(*args, **kwargs)
        return noted


def copies(features, count: int):
    """``count`` copies of each feature, renamed, reading the same column."""
    return tuple(f.model_copy(update={"name": f"{f.name}_{k}", "column": f.name})
                 for k in range(count) for f in features)


# ---------------------------------------------------------------- the queries, built only

def test_a_wide_pass_is_cut_into_queries_within_the_limit_holding_every_sum_once():
    rows = fitdata.table(rows=50)
    design = Design(fitdata.source(), copies(fitdata.features(rows)[0], 20), column("bad"), "id", K)
    p = design.columns
    assert p == 61
    models = [0, 1, 2, K]
    cuts = pass_blocks(p, models)
    names: Counter = Counter()
    for blocks in cuts:
        tree = pass_query(design, {m: np.full(p, 0.1) for m in models}, blocks)
        assert max(widths(tree)) <= MAX_COLUMNS <= POSTGRES_SELECT_LIMIT
        assert max(widths(tree)) == pass_width(p, blocks)
        names.update(outer_names(tree)[2:])
    # one model alone sums 61 + 61·62/2 + 2 = 1,954 (over the limit): at least 4·1954/1598 queries
    assert len(cuts) >= 5
    expected = Counter([f"g_{m}_{j}" for m in models for j in range(p)]
                       + [f"h_{m}_{i}_{j}" for m in models for i in range(p) for j in range(i, p)]
                       + [f"{what}_{m}" for m in models for what in ("loss", "extreme")])
    assert names == expected


def test_a_narrow_pass_stays_one_query():
    rows = fitdata.table(rows=50)
    design = Design(fitdata.source(), fitdata.features(rows)[0], column("bad"), "id", K)
    assert len(pass_blocks(design.columns, [0, 1, 2, K])) == 1


def test_the_widest_fit_allowed_still_fits_its_narrowest_queries():
    # p = MAX_CHARACTERISTICS + 1 columns: one Hessian row with its w·x column is the widest
    # single block; one characteristic more and that block alone would be over the limit
    p = MAX_CHARACTERISTICS + 1
    for block in [(0, GRADIENT), (0, 0), (0, 1), (0, LOSS)]:
        assert pass_width(p, [block]) <= MAX_COLUMNS
    assert pass_width(p + 1, [(0, 1)]) > MAX_COLUMNS


def test_moments_of_a_wide_design_are_cut_into_queries_within_the_limit():
    rows = fitdata.table(rows=50)
    design = Design(fitdata.source(), copies(fitdata.features(rows)[0], 20), column("bad"))
    queries = moment_queries(design)
    assert len(queries) == 2  # 60 + 60·61/2 = 1,890 sums
    names: Counter = Counter()
    for tree in queries:
        assert max(widths(tree)) <= MAX_COLUMNS
        assert outer_names(tree)[:2] == ["rows", "events"]
        names.update(outer_names(tree)[2:])
    assert names == Counter([f"s_{j}" for j in range(1, 61)]
                            + [f"s_{i}_{j}" for i in range(1, 61) for j in range(i, 61)])


# ---------------------------------------------------------------- on the engines

def _wide_sums_case(engine, rows):
    engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    feats, x, y = fitdata.features(rows)
    folds = np.array([fold_of(r[0], K) for r in rows])
    wide = np.column_stack([x[:, 0]] + [x[:, 1:]] * 20)
    design = Design(fitdata.source(), copies(feats, 20), column("bad"), "id", K)
    return design, DensePasses(wide, y, folds)


@pytest.mark.parametrize("name", ["duckdb", "postgres"])
def test_a_wide_pass_cut_into_queries_equals_numpy(request, name):
    # the aggregate queries (the PostgreSQL and Spark route; on DuckDB too, called directly)
    # against numpy on the independently binned design: two models of 60 characteristics, 3,908
    # sums a row, in three queries
    rows = fitdata.table(rows=600)
    with open_test_engine(request, name) as engine:
        recording = Recording(engine)
        design, dense = _wide_sums_case(recording, rows)
        rng = np.random.default_rng(5)
        betas = {m: rng.normal(0.0, 0.05, design.columns) for m in (1, K)}
        got = EnginePasses(recording, design)(betas)
    expected = dense(betas)
    for m in betas:
        np.testing.assert_allclose(got[m].gradient, expected[m].gradient, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(got[m].hessian, expected[m].hessian, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(got[m].loss, expected[m].loss, rtol=1e-11)
        np.testing.assert_array_equal(got[m].rows, expected[m].rows)
    passes = [width for width, purpose in recording.seen if purpose.startswith("a Newton step")]
    assert len(passes) == 3 and max(passes) <= MAX_COLUMNS


def wide_table(columns: int, rows: int, seed: int = 4, texts: int = 0):
    """id, x_0 … x_{columns−1} (numbers, a few NULL), t_0 … t_{texts−1} (text), bad: every
    characteristic moves the odds."""
    rng = np.random.default_rng(seed)
    x = np.round(rng.normal(size=(rows, columns)), 2)
    t = rng.integers(0, 3, size=(rows, texts))
    eta = -1.2 + x @ rng.uniform(-0.5, 0.5, columns) + (t == 2) @ rng.uniform(-0.5, 0.5, texts)
    bad = (rng.random(rows) < 1 / (1 + np.exp(-eta))).astype(int)
    values = x.astype(object)
    values[rng.random((rows, columns)) < 0.02] = None
    words = np.array(["low", "mid", "high"], dtype=object)[t]
    data = [(i, *values[i], *words[i], int(bad[i])) for i in range(rows)]
    return ([("id", "BIGINT")] + [(f"x_{j}", "DOUBLE") for j in range(columns)]
            + [(f"t_{j}", "VARCHAR") for j in range(texts)] + [("bad", "BIGINT")]), data


def _fit_settings() -> FitSettings:
    return FitSettings(penalty="none", alpha=0.0, folds=1, lambdas=1, lambda_ratio=1e-2, cv_metric="deviance",
                       one_se=False, min_iv=0.0, max_correlation=0.99, keep=(), drop=(), key="id",
                       base_score=600.0, base_odds=50.0, pdo=20.0, rounding="none", grades="quantiles:5")


@pytest.fixture(scope="module")
def wide_rows():
    return wide_table(60, 1500)


def test_a_fit_of_60_characteristics_is_the_same_on_duckdb_and_postgres(request, wide_rows, tmp_path):
    columns, data = wide_rows
    reports, seen = {}, {}
    binning = None
    for name in ("duckdb", "postgres"):
        with open_test_engine(request, name) as engine:
            recording = Recording(engine)
            recording.write_rows(["dev"], columns, data, "loading the development rows")
            if binning is None:
                binning = api.bin_development(recording, "dev", "bad", key="id",
                                              settings=api.Settings(min_events=20, fine_classes=5)).binning
                assert len(binning.features) == 60
            reports[name] = api.fit_development(recording, binning, _fit_settings(), Naming(name="wide"),
                                                tmp_path / f"{name}.yaml")
            seen[name] = recording.seen
    duckdb, postgres = reports["duckdb"], reports["postgres"]
    assert len(duckdb.characteristics) >= 55
    assert postgres.intercept == pytest.approx(duckdb.intercept, abs=1e-9)
    for got, expected in zip(postgres.characteristics, duckdb.characteristics, strict=True):
        assert got.name == expected.name
        assert got.coefficient == pytest.approx(expected.coefficient, abs=1e-9)
        assert got.standard_error == pytest.approx(expected.standard_error, rel=1e-9)
    # every query of bin and fit, on both engines, within the limit: the WoE correlations (1,890
    # sums) in two queries, each Newton step on PostgreSQL (1,954 sums) in two
    for name in seen:
        assert max(width for width, _ in seen[name]) <= MAX_COLUMNS
        assert sum(1 for _, purpose in seen[name] if purpose == "the WoE columns' means and correlations") == 2
    # the passes for the rows and events per fold and for λ_max sum no Hessian (one query each)
    steps = [purpose for _, purpose in seen["postgres"] if purpose.startswith("a Newton step")]
    assert len(steps) == 2 * (postgres.passes - 2) + 2


def test_a_bin_of_a_table_too_wide_for_one_pass_counts_as_column_by_column(engine, monkeypatch):
    # the limit lowered to 100 (the cut is the same code at any limit; at the real one a table
    # needs 200 numeric or 800 text columns): 40 numeric columns take 321 columns for their
    # special values and 120 for their candidates, 60 text columns 122 for their values
    monkeypatch.setattr(width, "MAX_COLUMNS", 100)
    columns, data = wide_table(40, 300, seed=8, texts=60)
    recording = Recording(engine)
    recording.write_rows(["dev"], columns, data, "loading the development rows")
    settings = api.Settings(min_events=10, fine_classes=5)
    wide = api.bin_development(recording, "dev", "bad", settings=settings).binning
    assert max(w for w, _ in recording.seen) <= 100
    purposes = Counter(purpose for _, purpose in recording.seen)
    assert purposes["counting NULL, NaN and infinite values"] == 4
    assert purposes["finding candidate quantiles"] == 2
    assert purposes["counting the values of text columns"] == 2
    for name in ("x_0", "x_17", "x_39", "t_0", "t_59"):
        alone = api.bin_development(engine, "dev", "bad", features=[name], settings=settings).binning
        assert wide.feature(name) == alone.feature(name)


def test_a_recount_too_wide_for_one_pass_counts_each_copy_as_its_original(engine, monkeypatch):
    # a recount lists about two columns a feature: a file too wide for one query at the real
    # limit holds ~800 features and takes minutes to compile and count, so the limit is lowered
    # to 100 here; the cut is the same code at any limit
    monkeypatch.setattr(width, "MAX_COLUMNS", 100)
    rows = fitdata.table(rows=400)
    engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    small = api.bin_development(engine, "dev", "bad", settings=api.Settings(min_events=20)).binning
    wide = [BinnedFeature(b.feature.model_copy(update={"name": f"{b.name}_{k}", "column": b.name}), b.iv, b.counts)
            for k in range(40) for b in small.features]
    plan = plan_columns(describe_columns(engine, fitdata.source()), "dev", "bad",
                        features=[b.name for b in small.features])
    recording = Recording(engine)
    counts = count_bins(recording, fitdata.source(), wide, plan)
    assert len(recording.seen) >= 3 and max(w for w, _ in recording.seen) <= 100
    originals = count_bins(engine, fitdata.source(), small.features, plan)
    for b in wide:
        assert {label: c for (name, label), c in counts.items() if name == b.name} == {
            label: c for (name, label), c in originals.items() if name == b.feature.column}


def test_a_fit_of_more_characteristics_than_the_queries_hold_is_refused_before_any_work(engine, tmp_path):
    rows = fitdata.table(rows=400)
    engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    small = api.bin_development(engine, "dev", "bad", settings=api.Settings(min_events=20)).binning
    count = MAX_CHARACTERISTICS + 1
    features = [BinnedFeature(b.feature.model_copy(update={"name": f"c_{k}", "column": b.name}), b.iv, b.counts)
                for k, b in ((k, small.features[k % 3]) for k in range(count))]
    recording = Recording(engine)
    with pytest.raises(InputError) as raised:
        api.fit_development(recording, dataclasses.replace(small, features=tuple(features)), _fit_settings(),
                            Naming(name="wide"), tmp_path / "wide.yaml")
    assert str(raised.value) == (
        f"the binning file holds {count:,} characteristics; a fit takes at most {MAX_CHARACTERISTICS:,} (each of "
        f"its queries is kept within {MAX_COLUMNS:,} columns, PostgreSQL's limit); remove some from the binning "
        "file, or bin fewer columns (scoremon bin --features or --exclude)")
    assert recording.seen == []
    assert not (tmp_path / "wide.yaml").exists()
