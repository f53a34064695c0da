"""Models fitted by other libraries, written as specs, score the same PDs through compiled SQL.

Each test fits a logistic regression live (statsmodels or scikit-learn) on data shipped in a
general-purpose package, checks the fit against the published numbers where there are some
(``../shared/CHECKS.md`` §7), builds a spec from the fitted coefficients, scores the data
inside DuckDB through :func:`scoremon.api.score` and requires the SQL's PD to equal the
library's own prediction to 1e-12. The scaling worked example (CHECKS.md §1) is scored the
same way.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels
import statsmodels.api as sm
import yaml
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression

from scoremon.spec import parse_spec
from tests.compiler.through_sql import close_pd, score_columns

KEY = "row_id"
WIDE = 1e9  # clip bounds far outside every value in these datasets: the model is purely linear
LBW_FILE = Path(statsmodels.__file__).parent / "genmod" / "tests" / "results" / "stata_lbw_glm.csv"


def spec_text(intercept: float, features: list[dict], scaling: dict | None = None) -> str:
    data = {
        "model": {"name": "external fit", "version": "1", "owner": "tests", "effective_date": "2026-01-01",
                  "intended_use": "checking the SQL against fitted models", "event": "y = 1",
                  "performance_window_months": 12},
        "intercept": float(intercept),
        "scaling": scaling or {"base_score": 600, "base_odds": 50, "pdo": 20},
        "features": features,
        "grades": [{"name": "all", "lower": -math.inf, "upper": math.inf}],
    }
    return yaml.safe_dump(data, sort_keys=False)


def linear(column: str, coefficient: float, center: float = 0.0, scale: float = 1.0) -> dict:
    return {"name": column, "type": "linear", "coefficient": float(coefficient), "lower": -WIDE, "upper": WIDE,
            "center": float(center), "scale": float(scale), "missing": {"log_odds": 0.0}}


def double_columns(frame: pd.DataFrame, names) -> dict:
    columns = {KEY: ("INTEGER", list(range(len(frame))))}
    for name in names:
        columns[name] = ("DOUBLE", [float(v) for v in frame[name]])
    return columns


def sql_pd(spec_yaml: str, columns: dict) -> np.ndarray:
    _, rows = score_columns(parse_spec(spec_yaml), columns, KEY)
    return np.array([row["pd"] for row in rows])


def assert_pd_equal(got: np.ndarray, want: np.ndarray) -> None:
    assert len(got) == len(want)
    bad = [(i, g, w) for i, (g, w) in enumerate(zip(got, want)) if not close_pd(g, w)]
    assert not bad, bad[:5]


# ---------------------------------------------------------------- scaling, CHECKS.md §1

@pytest.mark.parametrize("rounding", ["none", "total"])
def test_scaling_worked_example_through_sql(rounding):
    # odds 50:1 at 600 points, 20 points to double the odds (Siddiqi 2006 ch. 6, from memory;
    # CHECKS.md §1): factor 28.853901, offset 487.122876; 100:1 → 620, 25:1 → 580, 1:1 → 487.1229.
    # η is the log-odds of the event (bad), so good:bad odds g give η = ln(1 / g).
    spec = parse_spec(spec_text(0.0, [linear("eta", 1.0)],
                                {"base_score": 600, "base_odds": 50, "pdo": 20, "rounding": rounding}))
    assert spec.scaling.factor == pytest.approx(28.853901, abs=5e-7)
    assert spec.scaling.offset == pytest.approx(487.122876, abs=5e-7)
    odds = [100.0, 25.0, 1.0, 50.0]
    columns = {KEY: ("INTEGER", [0, 1, 2, 3]), "eta": ("DOUBLE", [math.log(1.0 / g) for g in odds])}
    _, rows = score_columns(spec, columns, KEY)
    scores = [row["score"] for row in rows]
    if rounding == "none":
        assert scores[0] == pytest.approx(620.0, abs=1e-9)
        assert scores[1] == pytest.approx(580.0, abs=1e-9)
        assert scores[2] == pytest.approx(487.1229, abs=5e-5)
        assert scores[3] == pytest.approx(600.0, abs=1e-9)
    else:  # half away from zero on the total: 487.12… → 487
        assert scores == [620.0, 580.0, 487.0, 600.0]
    # PD = bad share = 1 / (1 + good:bad odds); a rounded score reports the PD of the score itself:
    # 487 stands for the odds 50 · 2^((487 − 600) / 20)
    at_487 = 1 / (1 + 50 * 2 ** ((487 - 600) / 20))
    expected = [1 / 101, 1 / 26, 1 / 2 if rounding == "none" else at_487, 1 / 51]
    assert [row["pd"] for row in rows] == pytest.approx(expected, rel=1e-12)


# ---------------------------------------------------------------- Spector & Mazzeo, CHECKS.md §7

@pytest.fixture(scope="module")
def spector() -> pd.DataFrame:
    return sm.datasets.spector.load_pandas().data


def test_spector_statsmodels_fit_scores_identically_in_sql(spector):
    exog = sm.add_constant(spector[["GPA", "TUCE", "PSI"]])
    result = sm.Logit(spector["GRADE"], exog).fit(disp=0, tol=1e-12)
    # Greene, Econometric Analysis 5th ed. ch. 21 (CHECKS.md §7) [pub]. The printed values
    # come from Stata's optimiser, which stops about 1.5e-6 short of the exact optimum that
    # statsmodels reaches; statsmodels' own tests compare them to 4 decimals.
    published = {"const": -13.02134832, "GPA": 2.82611297, "TUCE": 0.09515767, "PSI": 2.37868773}
    errors = {"const": 4.93132463, "GPA": 1.26294115, "TUCE": 0.14155421, "PSI": 1.06456430}
    for name, value in published.items():
        assert result.params[name] == pytest.approx(value, abs=1e-5)
        assert result.bse[name] == pytest.approx(errors[name], abs=1e-5)
    assert result.llf == pytest.approx(-12.88963347, abs=1e-5)

    features = [linear(name, result.params[name]) for name in ("GPA", "TUCE", "PSI")]
    got = sql_pd(spec_text(result.params["const"], features), double_columns(spector, ["GPA", "TUCE", "PSI"]))
    assert_pd_equal(got, np.asarray(result.predict()))  # [lib] statsmodels' own prediction


def test_spector_sklearn_l2_fit_scores_identically_in_sql(spector):
    X, y = spector[["GPA", "TUCE", "PSI"]].to_numpy(), spector["GRADE"].to_numpy()
    model = LogisticRegression(C=1.0, tol=1e-10, max_iter=10_000).fit(X, y)
    # scikit-learn's L2 objective with an unpenalised intercept, C = 1 (CHECKS.md §7) [lib]
    assert model.intercept_[0] == pytest.approx(-7.94901205, abs=1e-6)
    assert model.coef_[0] == pytest.approx([1.21008743, 0.13015191, 1.16214448], abs=1e-6)

    features = [linear(name, c) for name, c in zip(("GPA", "TUCE", "PSI"), model.coef_[0])]
    got = sql_pd(spec_text(model.intercept_[0], features), double_columns(spector, ["GPA", "TUCE", "PSI"]))
    assert_pd_equal(got, model.predict_proba(X)[:, 1])  # [lib] live scikit-learn prediction


def test_breast_cancer_standardised_fit_uses_center_and_scale(tmp_path):
    # scikit-learn fitted on standardised columns; the spec undoes the standardising itself
    # through each linear feature's center and scale. Dataset shipped with scikit-learn.
    data = load_breast_cancer(as_frame=True).frame
    names = ["mean radius", "mean texture", "mean smoothness", "worst concavity"]
    raw = data[names].to_numpy()
    mean, sd = raw.mean(axis=0), raw.std(axis=0)
    model = LogisticRegression(C=1.0, tol=1e-10, max_iter=10_000).fit((raw - mean) / sd, data["target"])
    features = [linear(n, c, m, s) for n, c, m, s in zip(names, model.coef_[0], mean, sd)]
    got = sql_pd(spec_text(model.intercept_[0], features), double_columns(data, names))
    assert_pd_equal(got, model.predict_proba((raw - mean) / sd)[:, 1])  # [lib]


# ---------------------------------------------------------------- low birth weight, CHECKS.md §7

LBW_PUBLISHED = {  # Stata results shipped with statsmodels (CHECKS.md §7) [pub]
    "const": 0.46122388, "age": -0.02710031, "lwt": -0.01515082, "black": 1.26264728, "other": 0.86207916,
    "smoke": 0.92334482, "ptl": 0.54183656, "ht": 1.83251780, "ui": 0.75851348,
}
LBW_NUMERIC = ["age", "lwt", "smoke", "ptl", "ht", "ui"]


@pytest.fixture(scope="module")
def lbw():
    if not LBW_FILE.exists():
        pytest.skip(f"the low-birth-weight data file is not in this statsmodels install ({LBW_FILE})")
    frame = pd.read_csv(LBW_FILE)
    # the file holds race as text (white / black / other); the model uses two dummies
    frame["black"] = (frame["race"] == "black").astype(float)
    frame["other"] = (frame["race"] == "other").astype(float)
    exog = sm.add_constant(frame[["age", "lwt", "black", "other", "smoke", "ptl", "ht", "ui"]].astype(float))
    result = sm.Logit(frame["low"].astype(float), exog).fit(disp=0, tol=1e-12)
    return frame, result


def test_lbw_fit_matches_published_coefficients(lbw):
    _, result = lbw
    for name, value in LBW_PUBLISHED.items():
        assert result.params[name] == pytest.approx(value, abs=1e-7)
    assert result.llf == pytest.approx(-100.72399557, abs=1e-7)


def test_lbw_linear_spec_scores_identically_in_sql(lbw):
    frame, result = lbw
    names = LBW_NUMERIC + ["black", "other"]
    features = [linear(name, result.params[name]) for name in names]
    got = sql_pd(spec_text(result.params["const"], features), double_columns(frame, names))
    assert_pd_equal(got, np.asarray(result.predict()))  # [lib] statsmodels' own prediction


def test_lbw_race_as_categorical_bins_scores_identically_in_sql(lbw):
    frame, result = lbw
    race = {
        "name": "race", "type": "categorical",
        "groups": [{"label": "black", "values": ["black"], "log_odds": float(result.params["black"])},
                   {"label": "other", "values": ["other"], "log_odds": float(result.params["other"])}],
        # the reference category of the dummies is the catch-all bin, adding nothing to η
        "other": {"label": "white", "values": ["white"], "log_odds": 0.0},
        "missing": {"log_odds": 0.0},
    }
    features = [linear(name, result.params[name]) for name in LBW_NUMERIC] + [race]
    columns = double_columns(frame, LBW_NUMERIC)
    columns["race"] = ("VARCHAR", list(frame["race"]))
    _, rows = score_columns(parse_spec(spec_text(result.params["const"], features)), columns, KEY)
    assert [row["race_bin"] for row in rows] == list(frame["race"])
    assert_pd_equal(np.array([row["pd"] for row in rows]), np.asarray(result.predict()))  # [lib]
