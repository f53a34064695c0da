"""The same `bin` + `fit` on DuckDB, PostgreSQL and Spark gives the same coefficients (1e-9),
and the demo development table's WoE design fits like statsmodels."""
from __future__ import annotations

import math

import numpy as np
import pytest
import statsmodels.api as sm
from sqlglot import exp

from scoremon import api
from scoremon.develop.records import FitSettings
from scoremon.develop.spec_writer import Naming
from scoremon.spec import load_spec
from tests.develop import fitdata


def _settings(**changes) -> FitSettings:
    values = dict(penalty="elastic", alpha=0.5, folds=3, lambdas=3, lambda_ratio=1e-2, cv_metric="deviance",
                  one_se=False, min_iv=0.0, max_correlation=0.9, keep=(), drop=(), key="id", base_score=600.0,
                  base_odds=50.0, pdo=20.0, rounding="none", grades="quantiles:5")
    values.update(changes)
    return FitSettings(**values)


def _bin_and_fit(engine, rows, out, settings: FitSettings):
    engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    binned = api.bin_development(engine, "dev", "bad", key="id", settings=api.Settings(min_events=20))
    return binned.binning, api.fit_development(engine, binned.binning, settings, Naming(name="engines"), out)


def test_bin_and_fit_give_the_same_coefficients_on_every_engine(each_engine, tmp_path):
    rows = fitdata.table(rows=2500, seed=9)
    settings = _settings()
    reference_engine = api.open_engine(":memory:")
    try:
        reference_binning, reference = _bin_and_fit(reference_engine, rows, tmp_path / "duckdb.yaml", settings)
    finally:
        reference_engine.close()
    binning, report = _bin_and_fit(each_engine, rows, tmp_path / "engine.yaml", settings)
    assert binning.fingerprint == reference_binning.fingerprint or [b.feature for b in binning.features] == [
        b.feature for b in reference_binning.features]
    assert report.chosen_lambda == pytest.approx(reference.chosen_lambda, rel=1e-12)
    assert report.intercept == pytest.approx(reference.intercept, abs=1e-9)
    for got, expected in zip(report.characteristics, reference.characteristics, strict=True):
        assert got.name == expected.name
        assert got.coefficient == pytest.approx(expected.coefficient, abs=1e-9)
        assert got.standard_error == pytest.approx(expected.standard_error, rel=1e-9)
    for got, expected in zip(report.path, reference.path, strict=True):
        assert got.cv_mean == pytest.approx(expected.cv_mean, rel=1e-10)
    assert report.discrimination.gini == pytest.approx(reference.discrimination.gini, abs=1e-12)
    engine_spec, duckdb_spec = load_spec(tmp_path / "engine.yaml"), load_spec(tmp_path / "duckdb.yaml")
    assert engine_spec.development.engine == each_engine.dialect
    assert [g.lower for g in engine_spec.grades] == pytest.approx([g.lower for g in duckdb_spec.grades], abs=1e-9)


@pytest.fixture(scope="module")
def demo_book(tmp_path_factory):
    from demo_warehouse.generate import build_warehouse  # noqa: PLC0415 - the demo generator is heavy
    return build_warehouse(tmp_path_factory.mktemp("demo") / "demo.duckdb", rows=60_000)


def test_the_demo_development_table_fits_like_statsmodels(demo_book, tmp_path):
    # [lib] statsmodels Logit (Newton, tol 1e-14) on the demo development table's WoE design,
    # binned in numpy from the written spec's bins: coefficients and standard errors to 1e-8
    engine = api.open_engine(str(demo_book.database))
    try:
        binned = api.bin_development(engine, "development", "bad_12m", key="application_id",
                                     month_column="application_month", exclude=("age", "region"))
        settings = _settings(penalty="none", alpha=0.0, folds=1, min_iv=0.02, max_correlation=0.7,
                             key="application_id", grades="quantiles:10")
        report = api.fit_development(engine, binned.binning, settings, Naming(name="demo"), tmp_path / "demo.yaml")
        frame = engine.query_frame(exp.select(exp.Star()).from_(api.source_relation(table="development")),
                                   "reading the demo rows for the reference design")
    finally:
        engine.close()
    spec = load_spec(tmp_path / "demo.yaml")
    columns = [np.ones(len(frame))]
    for feature in spec.features:
        values = [None if v is None or (isinstance(v, float) and math.isnan(v)) else v
                  for v in frame[feature.column or feature.name].astype(object).where(
                      frame[feature.column or feature.name].notna(), None)]
        columns.append(fitdata.numpy_woe(feature, values))
    x = np.column_stack(columns)
    y = frame["bad_12m"].to_numpy(dtype=float)
    reference = sm.Logit(y, x).fit(method="newton", tol=1e-14, maxiter=100, disp=0)
    np.testing.assert_allclose([spec.intercept] + [f.coefficient for f in spec.features], reference.params, rtol=1e-8)
    np.testing.assert_allclose([report.intercept_standard_error] + [c.standard_error for c in report.characteristics],
                               reference.bse, rtol=1e-8)
    assert spec.development.months == ["2024-05", "2025-04"]
