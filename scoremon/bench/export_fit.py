"""The export route of line (j): the WoE design fetched into numpy floats, the λ path fitted by
scikit-learn.

What a modeller without `scoremon fit` would do with the same bins: select each chosen
characteristic's WoE (the fit's own design query, :func:`scoremon.develop.design.design_query`:
the same binning CASE, and the fold from md5 of the key, :mod:`scoremon.develop.folds`) into a
float matrix; then for each fold k fit ``LogisticRegression`` on the other folds along the same
λ grid, each λ starting from the previous one's solution, with C = 1/(N_k·λ) (N_k the training
rows: README, Fitting, and tests/develop/test_newton.py), and measure the held-out mean deviance
2·Σloss/n; choose the λ with the best mean; fit all rows at that λ.

That is less than `scoremon fit` does (it fits all rows at every λ, and adds the unpenalised fit
with standard errors, Gini and KS, the baseline and the spec), so the comparison leans towards
this route. The solver is ``newton-cholesky`` (Newton's method with the full Hessian, the
fastest of scikit-learn's solvers when rows far outnumber columns, and exact to its tolerance);
scikit-learn is a test dependency of scoremon, imported here only when the line runs.
"""
from __future__ import annotations

import importlib.util
import warnings
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..develop.design import FOLD, Y, Design, design_query, x_column
from ..engines import Engine

TOLERANCE = 1e-10  # newton-cholesky stops when every gradient entry (of the mean loss) is at most this
MAX_ITERATIONS = 200


def available() -> bool:
    """Whether scikit-learn is installed (``pip install scikit-learn``, or scoremon's ``test`` extra)."""
    return importlib.util.find_spec("sklearn") is not None


def float_bytes(rows: int, characteristics: int) -> int:
    """Bytes of the floats the export route holds: each characteristic's WoE and y, 8 bytes each."""
    return rows * (characteristics + 1) * np.dtype(float).itemsize


@dataclass(frozen=True)
class ExportedDesign:
    """The design as floats: ``x`` (rows × characteristics), ``y`` (0/1) and each row's fold."""

    x: np.ndarray
    y: np.ndarray
    folds: np.ndarray

    @property
    def float_bytes(self) -> int:
        return self.x.nbytes + self.y.nbytes


@dataclass(frozen=True)
class ExportFit:
    """The export route's result: the chosen λ's index on the grid, the all-rows coefficients
    there (intercept first), the mean held-out deviance per λ, and scikit-learn's iterations."""

    chosen: int
    coefficients: np.ndarray
    cv_means: tuple[float, ...]
    iterations: int
    fits: int
    float_bytes: int


def export_design(engine: Engine, design: Design) -> ExportedDesign:
    """Fetch the WoE design of ``design`` from ``engine`` into numpy floats."""
    frame = engine.query_frame(design_query(design), "exporting the WoE design to numpy")
    x = frame[[x_column(j) for j in range(1, design.columns)]].to_numpy(dtype=float)
    return ExportedDesign(x, frame[Y].to_numpy(dtype=float), frame[FOLD].to_numpy(dtype=np.int64))


def fit_exported(data: ExportedDesign, lambdas: Sequence[float], fold_count: int) -> ExportFit:
    """The λ path with K-fold cross-validation over ``data``, then the all-rows fit at the chosen λ."""
    from sklearn.exceptions import ConvergenceWarning
    from sklearn.linear_model import LogisticRegression

    def model() -> LogisticRegression:
        return LogisticRegression(solver="newton-cholesky", tol=TOLERANCE, max_iter=MAX_ITERATIONS, warm_start=True)

    deviance = np.empty((len(lambdas), fold_count))
    iterations = fits = 0
    with warnings.catch_warnings():
        warnings.simplefilter("error", ConvergenceWarning)  # a fit that stops short is a failed line
        for k in range(fold_count):
            training = data.folds != k
            x, y = data.x[training], data.y[training]
            held_x, held_y = data.x[~training], data.y[~training]
            fold_model = model()
            for i, lam in enumerate(lambdas):
                fold_model.set_params(C=1.0 / (len(y) * lam))
                fold_model.fit(x, y)
                iterations, fits = iterations + int(fold_model.n_iter_[0]), fits + 1
                eta = fold_model.decision_function(held_x)
                deviance[i, k] = 2.0 * float(np.mean(np.logaddexp(0.0, eta) - held_y * eta))
            del x, y, held_x, held_y
        means = deviance.mean(axis=1)
        chosen = int(np.argmin(means))  # the first best mean, as `scoremon fit` chooses without --one-se
        final = model().set_params(C=1.0 / (len(data.y) * lambdas[chosen])).fit(data.x, data.y)
    iterations, fits = iterations + int(final.n_iter_[0]), fits + 1
    return ExportFit(chosen, np.r_[final.intercept_, final.coef_[0]], tuple(float(m) for m in means), iterations, fits,
                     data.float_bytes)


def export_and_fit(engine: Engine, design: Design, lambdas: Sequence[float]) -> ExportFit:
    """The whole export route (see the module docstring)."""
    return fit_exported(export_design(engine, design), lambdas, design.fold_count)
