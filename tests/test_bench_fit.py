"""The pieces of the fitting lines of ``scoremon bench``: (j) `bin` + `fit` against the export route
to scikit-learn, (k) the fit's peak memory in a child process.

Functional only: no assertion here is about speed or about a memory figure (the command prints
those, tests never check them).
"""
import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer
from sklearn.metrics import roc_auc_score
from sqlglot import exp

from scoremon.bench import development, export_fit, workload
from scoremon.bench.fit_memory import measure_fit_memory
from scoremon.bench.timing import time_pair
from scoremon.develop.folds import fold_of
from scoremon.develop.newton import DensePasses
from scoremon.develop.path import fit_path
from scoremon.engines import DuckDBEngine
from scoremon.errors import EngineError
from scoremon.trees import table_path
from tests.reference_scorer import ReferenceScorer


def test_development_rows_draw_their_outcome_from_the_bench_spec_pd(engine):
    # the PD of each row from the independent reference scorer (tests/reference_scorer.py):
    # the event share must sit within 4 binomial standard errors of the mean PD, and the PD must
    # rank the events (AUC from scikit-learn's roc_auc_score)
    rows = 20_000
    engine.write_table(workload.generate_rows(rows), ["input"], "generating rows")
    development.create_development(engine, "input")
    found = engine.query(exp.select(exp.Star()).from_(table_path([development.DEVELOPMENT])), "reading the rows")
    assert sorted(row[workload.KEY] for row in found) == list(range(rows))
    outcome = np.array([row[workload.OUTCOME] for row in found], dtype=float)
    assert set(np.unique(outcome)) == {0.0, 1.0}
    scorer = ReferenceScorer(workload.bench_spec())
    pd_ = np.array([scorer.score_row({name: row[name] for name in workload.input_columns()})["pd"] for row in found])
    standard_error = np.sqrt(np.sum(pd_ * (1.0 - pd_))) / rows
    assert abs(outcome.mean() - pd_.mean()) <= 4.0 * standard_error
    assert roc_auc_score(outcome, pd_) > 0.6


def test_export_route_fits_the_same_path_as_scoremon_fit():
    # [lib] scikit-learn LogisticRegression (newton-cholesky) along our λ grid, C = 1/(N_k·λ) per
    # fold model, held-out mean deviance, against fit_path over the same design and folds
    # (folds from md5 of a key, scoremon.develop.folds.fold_of): the same λ chosen, the same
    # coefficients to 1e-6 (the L2 tolerance) and the same cross-validated deviances.
    # Data: scikit-learn's bundled breast-cancer table, first 6 measurements, standardised.
    data = load_breast_cancer()
    x = data.data[:, :6]
    x = (x - x.mean(axis=0)) / x.std(axis=0)
    y = data.target.astype(float)
    folds = np.array([fold_of(f"application-{i}", 5) for i in range(len(y))])
    ours = fit_path(DensePasses(np.column_stack([np.ones(len(y)), x]), y, folds, 5), 7, 5, 0.0, count=8, ratio=1e-4)
    lambdas = [point.lam for point in ours.points]
    route = export_fit.fit_exported(export_fit.ExportedDesign(x, y, folds), lambdas, 5)
    assert route.chosen == ours.chosen
    np.testing.assert_allclose(route.coefficients, ours.chosen_point.fit.coefficients, atol=1e-6, rtol=0)
    np.testing.assert_allclose(route.cv_means, [point.cv_mean for point in ours.points], rtol=1e-8)
    assert route.fits == 5 * len(lambdas) + 1


def test_export_float_bytes_worked_by_hand():
    # 50,000,000 rows × (15 WoE + y) × 8 bytes = 6,400,000,000 bytes (5.96 GiB)
    assert export_fit.float_bytes(50_000_000, 15) == 6_400_000_000
    data = export_fit.ExportedDesign(np.zeros((10, 15)), np.zeros(10), np.zeros(10, dtype=int))
    assert data.float_bytes == export_fit.float_bytes(10, 15) == 1_280


def test_fit_memory_child_that_fails_names_its_purpose_and_leaves_no_files(tmp_path):
    database = tmp_path / "empty.duckdb"
    DuckDBEngine(str(database)).close()  # no development table in it
    with pytest.raises(EngineError) as caught:
        measure_fit_memory(database, tmp_path, None, "256MB")
    assert "binning in the fit-memory child process" in str(caught.value)
    assert "development" in str(caught.value)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["empty.duckdb"]


def test_a_step_stopped_by_the_memory_limit_is_measured_again_without_one(tmp_path):
    # 4MB is too little for DuckDB to check the key's uniqueness: both children stop with
    # "Out of Memory", run again without a limit, and say why
    database = tmp_path / "rows.duckdb"
    with DuckDBEngine(str(database)) as engine:
        engine.write_table(workload.generate_rows(20_000), ["input"], "generating rows")
        development.create_development(engine, "input")
    result = measure_fit_memory(database, tmp_path, None, "4MB")
    for step, purpose in ((result.binning, "binning"), (result.fit, "fitting")):
        assert f"{purpose} in the fit-memory child process failed" in step.out_of_memory
        assert "Out of Memory" in step.out_of_memory
        assert step.rows == 20_000 and step.characteristics == 15 and step.peak_bytes > 0
    assert result.fit.passes > 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rows.duckdb"]


@pytest.mark.parametrize("warm", [False, True])
def test_time_pair_lets_the_second_side_lead(warm):
    calls = []
    timing = time_pair(lambda: calls.append("first"), lambda: calls.append("second"), 3, warm=warm,
                       second_leads=True)
    rounds = ["second", "first", "first", "second", "second", "first"]
    assert calls == (["second", "first"] if warm else []) + rounds
    assert len(timing.first) == len(timing.second) == 3

