"""Selection of characteristics, VIF, and the fit's handling of edge cases in the engine."""
from __future__ import annotations

import numpy as np
import pytest
from statsmodels.stats.outliers_influence import variance_inflation_factor

from scoremon import api
from scoremon.cli import main
from scoremon.develop.selection import select, variance_inflation
from scoremon.errors import InputError
from tests.develop import fitdata
from tests.develop.test_newton import cancer

NAMES = ["a", "b", "c", "d"]
CORRELATION = np.array([[1.0, 0.9, 0.1, 0.0], [0.9, 1.0, 0.2, 0.0], [0.1, 0.2, 1.0, 0.0], [0.0, 0.0, 0.0, 1.0]])


def test_rules_in_order_min_iv_then_correlation_by_iv():
    chosen = select(NAMES, [0.3, 0.4, 0.01, 0.2], CORRELATION, [False] * 4)
    assert chosen.chosen == ("b", "d")
    assert [(e.name, e.reason) for e in chosen.left_out] == [
        ("a", "WoE correlation +0.90 with b (higher IV) beyond 0.7"),
        ("c", "IV 0.0100 below the minimum 0.02")]


def test_keep_and_drop_override_the_rules_and_typos_are_named():
    chosen = select(NAMES, [0.3, 0.4, 0.01, 0.2], CORRELATION, [False] * 4, keep=["a", "c"], drop=["d"])
    assert chosen.chosen == ("a", "c")
    assert [(e.name, e.reason) for e in chosen.left_out] == [
        ("b", "WoE correlation +0.90 with a (kept by --keep) beyond 0.7"), ("d", "dropped by --drop")]
    both = select(NAMES, [0.3, 0.4, 0.01, 0.2], CORRELATION, [False] * 4, keep=["a", "b"])
    assert both.chosen == ("a", "b", "d")
    assert both.warnings == ("a kept by --keep although its WoE correlates +0.90 with b",)
    with pytest.raises(InputError, match=r"--keep 'bb': no such characteristic in the binning file; did you mean 'b'\?"):
        select(NAMES, [0.3] * 4, CORRELATION, [False] * 4, keep=["bb"])


def test_a_constant_characteristic_is_left_out_and_cannot_be_kept():
    chosen = select(NAMES, [0.3, 0.4, 0.0, 0.2], CORRELATION, [False, False, True, False], max_correlation=0.95)
    assert ("c", "one WoE value on every development row (constant)") in [(e.name, e.reason) for e in chosen.left_out]
    with pytest.raises(InputError, match="--keep 'c': its WoE is the same on every development row"):
        select(NAMES, [0.3, 0.4, 0.0, 0.2], CORRELATION, [False, False, True, False], keep=["c"])


def test_vif_from_the_correlation_matrix_equals_statsmodels():
    # [lib] statsmodels variance_inflation_factor (regression of each column on the others with a constant)
    x, _ = cancer(5)
    expected = [variance_inflation_factor(x, j) for j in range(1, x.shape[1])]
    np.testing.assert_allclose(variance_inflation(np.corrcoef(x[:, 1:].T)), expected, rtol=1e-9)


def _binned(tmp_path, rows, **settings):
    url = str(tmp_path / "dev.duckdb")
    engine = api.open_engine(url)
    engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    report = api.bin_development(engine, "dev", "bad", key="id", settings=api.Settings(**settings))
    engine.close()
    return url, api.write_binning(report.binning, tmp_path / "bins.yaml")


def test_perfect_separation_is_a_warning_and_no_standard_errors(tmp_path, capsys):
    url, bins = _binned(tmp_path, fitdata.table(rows=1500, seed=2, separate=True), min_events=5, min_share=0.02)
    code = main(["fit", str(bins), "--db", url, "--out", str(tmp_path / "s.yaml"), "--json", str(tmp_path / "s.json"),
                 "--max-correlation", "1"])
    printed = capsys.readouterr()
    assert code == 0, printed.err
    assert "quasi-separation" in printed.out
    import json
    report = json.loads((tmp_path / "s.json").read_text())
    assert report["status"] == "separation"
    assert all(c["standard_error"] is None for c in report["characteristics"])


def test_fewer_than_two_events_in_a_fold_is_one_clear_line(tmp_path, capsys):
    rows = fitdata.table(rows=400, seed=4)
    events = [i for i, r in enumerate(rows) if r[4] == 1]
    rows = [r if r[4] == 0 or i in events[:6] else r[:4] + (0,) for i, r in enumerate(rows)]
    url, bins = _binned(tmp_path, rows, min_events=1, min_share=0.05)
    code = main(["fit", str(bins), "--db", url, "--out", str(tmp_path / "s.yaml"), "--folds", "10"])
    printed = capsys.readouterr()
    assert code == 2
    assert "every fold needs at least 2 events and 2 non-events: use fewer folds (--folds)" in printed.err
    assert len(printed.err.strip().splitlines()) == 1


def test_a_constant_characteristic_is_left_out_of_the_fit_with_its_reason(tmp_path, capsys):
    rows = [r[:2] + (0.5,) + r[3:] for r in fitdata.table(rows=1500, seed=6)]  # utilisation constant
    url, bins = _binned(tmp_path, rows, min_events=10)
    code = main(["fit", str(bins), "--db", url, "--out", str(tmp_path / "c.yaml"), "--folds", "3", "--min-iv", "0"])
    printed = capsys.readouterr()
    assert code == 0, printed.err
    assert "utilisation (one WoE value on every development row (constant))" in " ".join(printed.out.split())
    assert "utilisation" not in [f.name for f in api.load_spec(tmp_path / "c.yaml").features]


def test_alpha_belongs_to_the_elastic_net_only(tmp_path, capsys):
    url, bins = _binned(tmp_path, fitdata.table(rows=600, seed=8), min_events=10)
    code = main(["fit", str(bins), "--db", url, "--out", str(tmp_path / "a.yaml"), "--penalty", "l1", "--alpha", "0.3"])
    assert code == 2 and "--alpha is for --penalty elastic only" in capsys.readouterr().err
    code = main(["fit", str(bins), "--db", url, "--out", str(tmp_path / "a.yaml"), "--penalty", "elastic",
                 "--alpha", "1"])
    assert code == 2 and "strictly between 0 (ridge) and 1 (lasso)" in capsys.readouterr().err


def test_a_table_that_changed_since_binning_is_a_warning(tmp_path, capsys):
    rows = fitdata.table(rows=1200, seed=12)
    url, bins = _binned(tmp_path, rows, min_events=10)
    engine = api.open_engine(url)
    engine.write_rows(["dev"], fitdata.COLUMNS, rows[:1000], "loading fewer rows")
    engine.close()
    code = main(["fit", str(bins), "--db", url, "--out", str(tmp_path / "t.yaml"), "--folds", "3"])
    printed = " ".join(capsys.readouterr().out.split())
    assert code == 0
    assert "the binning file counted 1,200 rows and" in printed and "the table now holds 1,000 and" in printed
