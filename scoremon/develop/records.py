"""The typed records a fit produces: what the terminal, JSON and HTML reports render.

Records hold values and plain-words warnings; renderers compute nothing. Field names are the
JSON keys (:func:`scoremon.report.json.to_json`).
"""
from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class FitSettings:
    """Every setting of one fit, as given or defaulted (the defaults are the command line's)."""

    penalty: str = "none"        # none, l2, l1, elastic
    alpha: float = 0.0           # α of the penalty (0 for l2, 1 for l1)
    folds: int = 5
    lambdas: int = 20            # number of λ on the path
    lambda_ratio: float = 1e-3   # λ_min / λ_max
    cv_metric: str = "deviance"  # deviance or auc
    one_se: bool = False
    min_iv: float = 0.02
    max_correlation: float = 0.7
    keep: tuple[str, ...] = ()
    drop: tuple[str, ...] = ()
    key: str | None = None
    base_score: float = 600.0
    base_odds: float = 50.0
    pdo: float = 20.0
    rounding: str = "none"
    grades: str = "quantiles:10"


@dataclass(frozen=True)
class Bin:
    """One bin of a characteristic as the binning file counted it on the development rows."""

    label: str
    rows: int
    events: int
    event_rate: float | None
    woe: float


@dataclass(frozen=True)
class Characteristic:
    """One chosen characteristic: IV, fitted coefficient, and the unpenalised fit's inference.

    ``coefficient`` multiplies the WoE in the spec (0 when the penalty removed it);
    ``unpenalised``, ``standard_error``, ``wald_z``, ``p_value`` come from the unpenalised fit
    on the same characteristics (None when that fit did not converge); ``vif`` from the WoE
    correlations.
    """

    name: str
    iv: float
    coefficient: float
    unpenalised: float | None
    standard_error: float | None
    wald_z: float | None
    p_value: float | None
    vif: float
    bins: tuple[Bin, ...] = ()


@dataclass(frozen=True)
class PathStep:
    """One λ of the path: non-zero coefficients and the cross-validated measure (mean ± sd)."""

    lam: float
    nonzero: int
    cv_mean: float
    cv_sd: float
    status: str
    coefficients: tuple[float, ...] = ()  # one per chosen characteristic, in their order; no intercept


@dataclass(frozen=True)
class Discrimination:
    """Gini and KS on the development rows, and cross-validated (held-out folds, mean ± sd)."""

    gini: float
    ks: float
    cv_gini_mean: float | None
    cv_gini_sd: float | None
    cv_ks_mean: float | None
    cv_ks_sd: float | None
    # the ROC curve of the development rows, kept by the pass that measured Gini and KS: points
    # (share of non-events, share of events) at or below a score, from (0, 0) to (1, 1), and the
    # point where the two shares differ most (the KS)
    roc: tuple[tuple[float, float], ...] = ()
    ks_point: tuple[float, float] | None = None


@dataclass(frozen=True)
class Left:
    """A characteristic of the binning file that is not in the model, and why."""

    name: str
    reason: str
    iv: float | None = None


@dataclass(frozen=True)
class FitReport:
    """The whole result of `scoremon fit`."""

    table: str
    engine: str
    rows: int
    events: int
    binning_file: str
    binning_fingerprint: str
    settings: FitSettings
    intercept: float
    intercept_unpenalised: float | None
    intercept_standard_error: float | None
    characteristics: tuple[Characteristic, ...]
    left_out: tuple[Left, ...]
    lambda_max: float | None
    chosen_lambda: float
    best_lambda: float
    path: tuple[PathStep, ...]
    discrimination: Discrimination
    status: str                  # converged, separation, no_convergence (of the chosen fit)
    warnings: tuple[str, ...]
    passes: int                  # aggregate passes over the development rows
    spec_file: str = ""
    spec_fingerprint: str = ""
    model_name: str = ""
    model_version: str = ""
    run_at: str = ""             # when the fit ran, UTC, ISO 8601
