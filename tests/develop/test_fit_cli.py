"""`scoremon fit` end to end: the binning file from `scoremon bin`, the fit in the engine, the
spec written with its development record and baseline."""
from __future__ import annotations

import json

import numpy as np
import pytest
import statsmodels.api as sm

from scoremon import api
from scoremon.cli import main
from scoremon.develop.binning_file import read_binning
from scoremon.diff import diff_models
from scoremon.spec import fingerprint, load_spec
from tests.develop import fitdata


@pytest.fixture
def development(tmp_path):
    """A DuckDB file with the synthetic development table, and its binning file."""
    url = str(tmp_path / "dev.duckdb")
    engine = api.open_engine(url)
    rows = fitdata.table(rows=4000, seed=5)
    engine.write_rows(["dev"], fitdata.COLUMNS, rows, "loading the development rows")
    report = api.bin_development(engine, "dev", "bad", key="id", settings=api.Settings(min_events=20))
    engine.close()
    bins = api.write_binning(report.binning, tmp_path / "bins.yaml")
    return url, bins, rows


def _fit(capsys, url, bins, out, *options):
    code = main(["fit", str(bins), "--db", url, "--out", str(out), *options])
    return code, capsys.readouterr()


def test_unpenalised_fit_writes_a_spec_equal_to_statsmodels_on_the_woe_design(development, tmp_path, capsys):
    # [lib] statsmodels Logit (Newton, tol 1e-14) on the WoE design binned in numpy from the
    # written spec's own bins: coefficients to 1e-8 relative, and the standard errors the report gives
    url, bins, rows = development
    out = tmp_path / "model.yaml"
    code, printed = _fit(capsys, url, bins, out, "--json", str(tmp_path / "fit.json"))
    assert code == 0, printed.err
    spec = load_spec(out)
    columns = {"income": 1, "utilisation": 2, "housing": 3}
    x = np.column_stack([np.ones(len(rows))] + [fitdata.numpy_woe(f, [r[columns[f.name]] for r in rows])
                                                  for f in spec.features])
    y = np.array([r[4] for r in rows], dtype=float)
    reference = sm.Logit(y, x).fit(method="newton", tol=1e-14, maxiter=100, disp=0)
    np.testing.assert_allclose([spec.intercept] + [f.coefficient for f in spec.features], reference.params, rtol=1e-8)
    report = json.loads((tmp_path / "fit.json").read_text())
    np.testing.assert_allclose([report["intercept_standard_error"]] + [c["standard_error"] for c in
                                                                       report["characteristics"]], reference.bse,
                               rtol=1e-8)
    assert spec.development.rows == 4000 and spec.development.settings["penalty"] == "none"
    assert spec.development.binning_fingerprint == read_binning(bins).fingerprint
    assert spec.baseline is not None and spec.baseline.rows == 4000
    assert len(spec.grades) == 10 and [s.features for s in spec.reasons.statements] == [[f.name] for f in spec.features]
    assert f"wrote {out}" in printed.out and "Gini" in printed.out
    assert all(len(line) <= 80 for line in printed.out.splitlines())


def test_an_existing_spec_is_never_replaced_unless_asked(development, tmp_path, capsys):
    url, bins, _ = development
    out = tmp_path / "model.yaml"
    out.write_text("keep me\n")
    code, printed = _fit(capsys, url, bins, out)
    assert code == 2 and f"--out {out} exists; give --replace to replace it, or choose another name" in printed.err
    assert out.read_text() == "keep me\n"
    code, _ = _fit(capsys, url, bins, out, "--replace", "--folds", "1")
    assert code == 0 and load_spec(out).development is not None


def test_a_report_that_fails_leaves_no_spec_behind(development, tmp_path, capsys, monkeypatch):
    # the reports are built before any file is written: a crash in one writes nothing (exit 3)
    from scoremon.report.html import fit as fit_page

    def broken(report, dialect):
        raise RuntimeError("the chart could not be drawn")

    monkeypatch.setattr(fit_page, "fit_html", broken)
    url, bins, _ = development
    out, json_file, html_file = tmp_path / "model.yaml", tmp_path / "fit.json", tmp_path / "fit.html"
    code, _ = _fit(capsys, url, bins, out, "--folds", "1", "--json", str(json_file), "--html", str(html_file))
    assert code == 3
    assert not out.exists() and not json_file.exists() and not html_file.exists()


def test_lasso_with_cv_and_pd_grades(development, tmp_path, capsys):
    url, bins, _ = development
    out = tmp_path / "lasso.yaml"
    code, printed = _fit(capsys, url, bins, out, "--penalty", "l1", "--lambdas", "8", "--one-se", "--cv-metric", "auc",
                         "--grades", "pd:0.1,0.2,0.4", "--json", str(tmp_path / "fit.json"))
    assert code == 0, printed.err
    spec = load_spec(out)
    report = json.loads((tmp_path / "fit.json").read_text())
    assert spec.development.chosen_lambda == report["chosen_lambda"] > 0
    assert [g.name for g in sorted(spec.grades, key=lambda g: g.lower)] == ["D", "C", "B", "A"]
    assert len(report["path"]) == 8 and report["path"][0]["nonzero"] == 0
    # AUC chooses: the chosen λ's mean held-out AUC is within one sd/√K of the best
    chosen = next(step for step in report["path"] if step["lam"] == report["chosen_lambda"])
    best = max(report["path"], key=lambda step: step["cv_mean"])
    assert best["cv_mean"] - chosen["cv_mean"] <= best["cv_sd"] / np.sqrt(5) + 1e-12
    assert 0.5 < chosen["cv_mean"] < 1.0
    # a PD band edge scores as offset − factor·logit(PD): 600 − 20/ln2·ln(50) − 20/ln2·ln(0.1/0.9)
    edges = sorted(g.lower for g in spec.grades)[1:]
    assert edges[-1] == pytest.approx(600 - 20 / np.log(2) * np.log(50) - 20 / np.log(2) * np.log(0.1 / 0.9), abs=1e-9)


def test_the_development_record_leaves_the_fingerprint_and_diff_names_it(development, tmp_path, capsys):
    url, bins, _ = development
    first, second = tmp_path / "a.yaml", tmp_path / "b.yaml"
    assert _fit(capsys, url, bins, first, "--folds", "1")[0] == 0
    assert _fit(capsys, url, bins, second, "--folds", "1", "--min-iv", "0.001")[0] == 0
    old, new = load_spec(first), load_spec(second)
    assert old.development != new.development
    assert fingerprint(old) == fingerprint(new)
    result = diff_models(old, new)
    assert result.is_equivalent
    assert "development setting min_iv: 0.001 (was 0.02)" in result.notes
    without = old.model_copy(update={"development": None})
    assert fingerprint(without) == fingerprint(old)


def test_a_penalty_without_folds_and_folds_without_key_are_refused(development, tmp_path, capsys):
    url, bins, _ = development
    code, printed = _fit(capsys, url, bins, tmp_path / "x.yaml", "--penalty", "l2", "--folds", "1")
    assert code == 2 and "a penalised fit chooses λ by cross-validation: give --folds 2 or more" in printed.err
    code, printed = _fit(capsys, url, bins, tmp_path / "x.yaml", "--drop", "incme")
    assert code == 2 and "--drop 'incme': no such characteristic in the binning file; did you mean 'income'?" in printed.err
    assert not (tmp_path / "x.yaml").exists()


def test_html_report_is_written_and_an_existing_one_refused_before_any_work(development, tmp_path, capsys):
    url, bins, _ = development
    out, report = tmp_path / "model.yaml", tmp_path / "fit.html"
    code, printed = _fit(capsys, url, bins, out, "--penalty", "l2", "--lambdas", "5", "--folds", "3",
                         "--html", str(report))
    assert code == 0, printed.err
    assert f"wrote {report} (" in printed.out
    first = report.read_text(encoding="utf-8")
    assert first.startswith("<!DOCTYPE html>") and "Model fit report" in first
    assert fingerprint(load_spec(out)) in first and "chosen λ" in first

    # refused before any fit: the spec is not written again either
    spec_text = out.read_text()
    out.unlink()
    code, printed = _fit(capsys, url, bins, out, "--html", str(report))
    assert code == 2 and f"--html {report} exists; give --replace to replace it, or choose another name" in printed.err
    assert not out.exists() and report.read_text(encoding="utf-8") == first

    code, printed = _fit(capsys, url, bins, out, "--html", str(report), "--replace")
    assert code == 0, printed.err
    text = report.read_text(encoding="utf-8")
    assert text != first and "Not penalised" in text and out.read_text() != spec_text

    # the report may not be written over an input or another output of the same run
    code, printed = _fit(capsys, url, bins, tmp_path / "other.yaml", "--html", str(bins), "--replace")
    assert code == 2 and f"--html {bins} is the binning file" in printed.err
