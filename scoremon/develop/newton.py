"""Fitting the logistic model from row sums: Newton–Raphson (IRLS) and proximal Newton.

The objective, for one model over its N training rows (column 0 of the design is the
intercept, never penalised; P zeroes it)::

    F(β) = (1/N)·Σ loss_i(β) + λ·(α·‖Pβ‖₁ + (1 − α)/2·‖Pβ‖²)
    loss_i = ln(1 + e^{η_i}) − y_i·η_i,   η_i = x_iᵀβ  (the log-odds of the event)

Everything row-level arrives through a *pass*: a function that takes coefficients for some
models and returns, per model, sums over the rows of each fold (:class:`FoldSums`: gradient
Σ x(μ − y), Hessian Σ μ(1 − μ)·x·xᵀ, loss, rows). Model ``m`` trains on every fold but fold
``m``; model ``K`` (one past the last fold) trains on all rows. A pass can run in numpy
(:class:`DensePasses`, for tests and small data) or as one aggregate query in the engine
(:mod:`scoremon.develop.design`); this module never sees a row. All models step in lock-step,
so each Newton step of every model costs one pass together.

* λ = 0, or α = 0 (ridge): Newton's step d = −A⁻¹G with G the gradient of F's smooth part
  and A = H/N + λ(1 − α)·P (Hastie, Tibshirani & Friedman, *Elements of Statistical
  Learning*, §4.4.1).
* α > 0 (lasso, elastic net): proximal Newton (Lee, Sun & Saunders, SIAM J. Optim. 24(3),
  2014, from memory): minimise the quadratic model Gᵀd + ½dᵀAd + λα‖P(β + d)‖₁ by cyclic
  coordinate descent with soft thresholding (Friedman, Hastie & Tibshirani, J. Stat. Software
  33(1), 2010), then search along d.
* Step-halving: a step is taken when F falls by at least 10⁻⁴ of the decrease the model
  predicts (Armijo), else halved, up to 40 times.
* Converged at β when the step d from β would move no coefficient by more than 1e-10 and F's
  slope along it is at most 1e-12·(1 + |F|) in size (for Newton's step −Gᵀd is the squared
  Newton decrement, twice the decrease the quadratic model predicts: Boyd & Vandenberghe,
  *Convex Optimization*, §9.5.1, from memory). The test needs only the sums at β, so a fit
  ends on the pass that measured β, with no pass to confirm a step that changes nothing.
* A start may be a previous fit (:class:`ModelFit`): its sums are those at its coefficients
  whatever the penalty, so a λ path starts each λ from the last one's sums, with no pass.
* The Hessian is summed on a pass only after a step that moved a coefficient by more than
  :data:`HESSIAN_REFRESH`; after a smaller step the last Hessian stands in (it differs from
  the current one by about the step's size, so each step still shrinks the error by that
  factor or more), and the pass sums only the gradient and the loss — about half the work
  per row. The unpenalised fit sums it on every pass: its standard errors read it.
* A penalised fit's passes may sum the Hessian in single precision (``rough``; an error near
  10⁻⁷ of its size, far below what a stale Hessian already differs by): the Hessian only
  steers the steps, while the gradient and the loss, which decide where a fit stops, are
  always summed in double precision. The unpenalised fit's Hessian is always exact.
* Quasi-separation: unpenalised, a training row with |η| > 36 (μ within 2e-16 of 0 or 1)
  for three steps in a row while not converged — the coefficients are running away and the
  maximum likelihood estimate does not exist; the fit stops and says so. A Newton system that
  turns singular after the first step (the separated rows' weights vanishing) is the same
  thing; singular at the start it is a constant or collinear design (:class:`SingularDesignError`).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Mapping, Sequence

import numpy as np

from ..errors import InputError

TOLERANCE_BETA = 1e-10
TOLERANCE_OBJECTIVE = 1e-12
MAX_ITERATIONS = 100
MAX_HALVINGS = 40
ARMIJO = 1e-4
EXTREME_ETA = 36.0
SEPARATION_STEPS = 3
HESSIAN_REFRESH = 1e-3
INNER_TOLERANCE = 1e-14
INNER_SWEEPS = 10_000

CONVERGED, SEPARATION, NO_CONVERGENCE = "converged", "separation", "no_convergence"


class SingularDesignError(InputError):
    """The Newton system is singular; ``columns`` are the design columns involved (0 = intercept)."""

    def __init__(self, message: str, columns: list[int]):
        super().__init__(message)
        self.columns = columns


@dataclass(frozen=True)
class FoldSums:
    """One model's sums over the rows of each fold, at its current coefficients.

    ``gradient`` (K, p) Σ x(μ − y); ``hessian`` (K, p, p) Σ μ(1 − μ)·x·xᵀ, or ``None`` from a
    pass asked for no Hessian; ``loss`` (K,)
    Σ ln(1 + e^η) − yη; ``rows`` (K,); ``extreme`` (K,) rows with |η| > :data:`EXTREME_ETA`.
    A fold model m (m < K) is never fitted on fold m, so a pass may leave that fold's gradient
    and Hessian at 0 (every pass does: :func:`held_out_only`); its loss, rows and extreme rows
    are summed.
    """

    gradient: np.ndarray
    hessian: np.ndarray | None
    loss: np.ndarray
    rows: np.ndarray
    extreme: np.ndarray

    def training(self, model: int) -> "Sums":
        """The sums over model ``model``'s training rows: every fold but fold ``model``."""
        keep = np.arange(len(self.rows)) != model
        return Sums(self.gradient[keep].sum(axis=0), None if self.hessian is None else self.hessian[keep].sum(axis=0),
                    float(self.loss[keep].sum()), float(self.rows[keep].sum()), float(self.extreme[keep].sum()))


def held_out_only(sums: FoldSums, model: int) -> FoldSums:
    """``sums`` with the gradient and Hessian of fold ``model`` set to 0 (for a fold model, whose
    own fold is held out; see :class:`FoldSums`). In place; returns ``sums``."""
    if model < len(sums.rows):
        sums.gradient[model] = 0.0
        if sums.hessian is not None:
            sums.hessian[model] = 0.0
    return sums


@dataclass(frozen=True)
class Sums:
    """Sums over one set of rows (see :class:`FoldSums`)."""

    gradient: np.ndarray
    hessian: np.ndarray
    loss: float
    rows: float
    extreme: float


# coefficients per model (and hessian=False for a pass without the Hessian; rough=True where a
# single-precision Hessian will do, as it only steers steps) → sums per fold per model
Passes = Callable[..., Mapping[int, FoldSums]]


@dataclass(frozen=True)
class Penalty:
    """λ·(α‖Pβ‖₁ + (1 − α)/2‖Pβ‖²); λ = 0 is the unpenalised fit."""

    lam: float = 0.0
    alpha: float = 0.0

    def __post_init__(self):
        if not (self.lam >= 0.0 and 0.0 <= self.alpha <= 1.0):
            raise InputError(f"penalty λ = {self.lam}, α = {self.alpha}: λ must be ≥ 0 and α in [0, 1]")

    @property
    def l1(self) -> float:
        return self.lam * self.alpha

    @property
    def l2(self) -> float:
        return self.lam * (1.0 - self.alpha)


@dataclass(frozen=True)
class ModelFit:
    """The result of fitting one model: its coefficients and how the fit ended.

    ``status`` is ``converged``, ``separation`` or ``no_convergence``; ``reason`` says why in
    words when not converged. ``gradient`` is the sum at ``coefficients``, and so is ``hessian``,
    exactly, when ``hessian_current`` (always for the unpenalised fit); a penalised fit's
    Hessian may be the one the last step used, summed within :data:`HESSIAN_REFRESH` of them,
    and in single precision (see the module docstring).
    """

    coefficients: np.ndarray
    status: str
    reason: str
    iterations: int
    passes: int
    objective: float
    loss: float
    rows: float
    gradient: np.ndarray
    hessian: np.ndarray
    extreme_rows: float
    heldout_loss: float = float("nan")
    heldout_rows: float = 0.0
    hessian_current: bool = True

    @property
    def converged(self) -> bool:
        return self.status == CONVERGED

    def standard_errors(self) -> np.ndarray:
        """√diag((XᵀWX)⁻¹): the unpenalised fit's standard errors (ESL §4.4.1)."""
        return np.sqrt(np.diag(np.linalg.inv(self.hessian)))


def objective(sums: Sums, beta: np.ndarray, penalty: Penalty) -> float:
    """F(β) from the sums at β (see the module docstring)."""
    rest = beta[1:]
    return sums.loss / sums.rows + penalty.l1 * float(np.abs(rest).sum()) + 0.5 * penalty.l2 * float(rest @ rest)


def smooth_gradient(sums: Sums, beta: np.ndarray, penalty: Penalty) -> np.ndarray:
    """∇ of (1/N)Σloss + λ(1 − α)/2‖Pβ‖²."""
    ridge = penalty.l2 * beta
    ridge[0] = 0.0
    return sums.gradient / sums.rows + ridge


def smooth_hessian(sums: Sums, penalty: Penalty) -> np.ndarray:
    a = sums.hessian / sums.rows
    if penalty.l2 > 0.0:
        a = a + penalty.l2 * np.diag([0.0] + [1.0] * (len(a) - 1))
    return a


@dataclass
class _State:
    beta: np.ndarray
    sums: Sums
    value: float
    iterations: int = 0
    passes: int = 1
    extreme_steps: int = 0
    status: str | None = None
    reason: str = ""
    direction: np.ndarray | None = None
    predicted: float = 0.0
    step: float = 1.0
    halvings: int = 0
    heldout: tuple[float, float] = (float("nan"), 0.0)
    hessian_current: bool = True


def fit_models(passes: Passes, starts: Mapping[int, "np.ndarray | ModelFit"], penalty: Penalty,
               max_iterations: int = MAX_ITERATIONS) -> dict[int, ModelFit]:
    """Fit each model in ``starts`` (model number → starting coefficients, or a previous fit
    whose sums are reused) under ``penalty``.

    Returns model number → :class:`ModelFit`. Raises :class:`InputError` when an unpenalised
    (or pure lasso) Newton system is singular — a characteristic constant over the training
    rows, or a combination of others — naming the design columns by position.
    """
    exact = penalty.lam == 0.0  # the unpenalised fit's standard errors read its Hessian
    reused = {m: b for m, b in starts.items() if isinstance(b, ModelFit) and (b.hessian_current or not exact)}
    fresh = {m: np.asarray(b.coefficients if isinstance(b, ModelFit) else b, dtype=float).copy()
             for m, b in starts.items() if m not in reused}
    first = passes(fresh, rough=not exact) if fresh else {}
    states = {}
    for m, start in starts.items():
        if m in reused:
            sums = Sums(start.gradient, start.hessian, start.loss, start.rows, start.extreme_rows)
            beta, heldout, passes_made = start.coefficients.copy(), (start.heldout_loss, start.heldout_rows), 0
        else:
            sums, beta, heldout, passes_made = first[m].training(m), fresh[m], _heldout(first[m], m), 1
        states[m] = _State(beta, sums, objective(sums, beta, penalty), passes=passes_made, heldout=heldout,
                           hessian_current=start.hessian_current if m in reused else exact)
    while True:
        active = [m for m, s in states.items() if s.status is None]
        if not active:
            break
        for m in active:
            state = states[m]
            if state.direction is None:
                try:
                    state.direction, state.predicted = _direction(state.beta, state.sums, penalty)
                except SingularDesignError:
                    if state.sums.extreme == 0 and state.iterations == 0:
                        raise
                    # singular only after steps: the weights μ(1 − μ) of separated rows are vanishing
                    # because the coefficients ran away; the design itself was fine at the start
                    state.status = SEPARATION
                    state.reason = _separation_reason(state.sums, state.beta)
                    continue
                if _settled(state):
                    state.status = CONVERGED
                    continue
                state.step, state.halvings = 1.0, 0
        active = [m for m in active if states[m].status is None]
        if not active:
            break
        trials = {m: states[m].beta + states[m].step * states[m].direction for m in active}
        moves = [float(np.max(np.abs(trials[m] - states[m].beta))) for m in active]
        result = passes(trials, hessian=exact or max(moves) > HESSIAN_REFRESH, rough=not exact)
        for m in active:
            _advance(states[m], trials[m], result[m].training(m), _heldout(result[m], m), penalty, max_iterations)
    return {m: ModelFit(s.beta, s.status, s.reason, s.iterations, s.passes, s.value, s.sums.loss, s.sums.rows,
                        s.sums.gradient, s.sums.hessian, s.sums.extreme, *s.heldout, s.hessian_current)
            for m, s in states.items()}


def _heldout(sums: FoldSums, model: int) -> tuple[float, float]:
    """Loss and rows of the fold model ``model`` leaves out (none for the all-rows model)."""
    if model < len(sums.rows):
        return float(sums.loss[model]), float(sums.rows[model])
    return float("nan"), 0.0


def _advance(state: _State, trial: np.ndarray, sums: Sums, heldout: tuple[float, float], penalty: Penalty,
             max_iterations: int) -> None:
    """Take or halve one model's step, then decide whether it has converged or must stop."""
    state.passes += 1
    summed = sums.hessian is not None
    if not summed:
        sums = Sums(sums.gradient, state.sums.hessian, sums.loss, sums.rows, sums.extreme)
    current = summed and penalty.lam == 0.0  # exact too: an unpenalised pass sums it in double precision
    value = objective(sums, trial, penalty)
    noise = 1e-13 * (1.0 + abs(state.value))
    if not (value <= state.value + ARMIJO * state.step * state.predicted or value <= state.value + noise):
        state.halvings += 1
        state.step *= 0.5
        if state.halvings > MAX_HALVINGS:
            state.status = NO_CONVERGENCE
            state.reason = (f"step-halving could not lower the objective after {MAX_HALVINGS} halvings "
                            f"(step {state.iterations + 1}); the Newton direction is not a descent direction")
        return
    change = float(np.max(np.abs(trial - state.beta)))
    state.beta, state.sums, state.value, state.heldout, state.hessian_current = trial, sums, value, heldout, current
    state.iterations += 1
    state.direction = None
    if penalty.lam == 0.0 and sums.extreme > 0:
        state.extreme_steps += 1
        if state.extreme_steps >= SEPARATION_STEPS:
            state.status = SEPARATION
            state.reason = _separation_reason(sums, trial)
            return
    else:
        state.extreme_steps = 0
    if state.iterations >= max_iterations:
        state.status = NO_CONVERGENCE
        state.reason = (f"no convergence in {max_iterations} Newton steps: the last step moved a coefficient by "
                        f"{change:.3g} (tolerance {TOLERANCE_BETA:g})")


def _settled(state: _State) -> bool:
    """Whether the step from ``state.beta`` is too small to matter (see the module docstring)."""
    return (float(np.max(np.abs(state.direction))) <= TOLERANCE_BETA
            and -state.predicted <= TOLERANCE_OBJECTIVE * (1.0 + abs(state.value)))


def _separation_reason(sums: Sums, beta: np.ndarray) -> str:
    return (f"quasi-separation: {int(sums.extreme)} training rows have a fitted probability within 2e-16 of 0 or 1 "
            f"and the coefficients keep growing (largest |β| {np.max(np.abs(beta)):.1f}); the unpenalised estimate "
            "does not exist — merge bins, drop the characteristic that separates, or use a penalty")


def _direction(beta: np.ndarray, sums: Sums, penalty: Penalty) -> tuple[np.ndarray, float]:
    """Newton's (or the proximal Newton) direction and the decrease the model predicts (≤ 0)."""
    g = smooth_gradient(sums, beta, penalty)
    a = smooth_hessian(sums, penalty)
    if penalty.l1 == 0.0:
        d = -_solve(a, g)
        return d, float(g @ d)
    z = _coordinate_descent(beta, g, a, penalty.l1)
    d = z - beta
    predicted = float(g @ d) + penalty.l1 * float(np.abs(z[1:]).sum() - np.abs(beta[1:]).sum())
    return d, min(predicted, 0.0)


def _solve(a: np.ndarray, g: np.ndarray) -> np.ndarray:
    scale = np.sqrt(np.maximum(np.diag(a), 0.0))
    flat = [j for j in range(len(a)) if scale[j] == 0.0]
    if flat:
        raise SingularDesignError(f"design column(s) {flat} are zero on every training row (a constant "
                                  "characteristic with WoE 0); drop them or use an L2 or elastic-net penalty", flat)
    scaled = a / np.outer(scale, scale)
    eigenvalues = np.linalg.eigvalsh(scaled)
    if eigenvalues[0] <= 1e-12 * eigenvalues[-1]:
        _, vectors = np.linalg.eigh(scaled)
        involved = [int(j) for j in np.flatnonzero(np.abs(vectors[:, 0]) > 0.1)]
        raise SingularDesignError(f"design columns {involved} are collinear on the training rows (one is a "
                                  "combination of the others, or constant); drop one of them or use an L2 or "
                                  "elastic-net penalty", involved)
    return np.linalg.solve(a, g)


def _coordinate_descent(beta: np.ndarray, g: np.ndarray, a: np.ndarray, l1: float) -> np.ndarray:
    """argmin_z Gᵀ(z − β) + ½(z − β)ᵀA(z − β) + l1·‖Pz‖₁ by cyclic coordinate descent.

    Coordinate j solves a 1-D problem ½a_jj·z_j² + b·z_j + l1|z_j| exactly: z_j = S(−b, l1)/a_jj
    with S the soft-threshold (the intercept: −b/a_jj). A column with a_jj = 0 stays at 0.
    """
    z = beta.copy()
    moved = np.zeros_like(beta)  # A(z − β)
    p = len(beta)
    for _ in range(INNER_SWEEPS):
        largest = 0.0
        for j in range(p):
            ajj = a[j, j]
            b = g[j] + moved[j] - ajj * z[j]
            if j == 0:
                new = -b / ajj
            elif ajj <= 0.0:
                new = 0.0
            else:
                new = np.sign(-b) * max(abs(b) - l1, 0.0) / ajj
            delta = new - z[j]
            if delta != 0.0:
                moved += a[:, j] * delta
                z[j] = new
                largest = max(largest, abs(delta))
        if largest <= INNER_TOLERANCE * (1.0 + float(np.max(np.abs(z)))):
            break
    return z


def kkt_violation(fit: ModelFit, penalty: Penalty) -> float:
    """The largest violation of the optimality conditions at ``fit`` (0 at the exact optimum).

    Intercept: G₀ = 0. Others: G_j + λα·sign(β_j) = 0 where β_j ≠ 0, |G_j| ≤ λα where β_j = 0,
    G being the gradient of the smooth part (Friedman, Hastie & Tibshirani 2010, §2.1).
    """
    sums = Sums(fit.gradient, fit.hessian, fit.loss, fit.rows, fit.extreme_rows)
    g = smooth_gradient(sums, fit.coefficients, penalty)
    worst = abs(g[0])
    for j in range(1, len(g)):
        if fit.coefficients[j] != 0.0:
            worst = max(worst, abs(g[j] + penalty.l1 * np.sign(fit.coefficients[j])))
        else:
            worst = max(worst, abs(g[j]) - penalty.l1)
    return float(worst)


class DensePasses:
    """A pass in numpy over a dense design: ``x`` (n, p) with a column of ones first, ``y`` 0/1,
    ``folds`` 0..K−1 (all 0 and K = 1 for a plain fit). For tests and small data."""

    def __init__(self, x: np.ndarray, y: np.ndarray, folds: np.ndarray | None = None, fold_count: int | None = None):
        self.x = np.asarray(x, dtype=float)
        self.y = np.asarray(y, dtype=float)
        self.folds = np.zeros(len(self.y), dtype=int) if folds is None else np.asarray(folds, dtype=int)
        self.fold_count = int(fold_count if fold_count is not None else self.folds.max() + 1)
        self.count = 0

    def __call__(self, betas: Mapping[int, np.ndarray], hessian: bool = True, rough: bool = False) -> dict[int, FoldSums]:
        self.count += 1  # the Hessian always exact: ``rough`` allows, it does not ask
        return {m: held_out_only(self.sums(beta, hessian), m) for m, beta in betas.items()}

    def sums(self, beta: np.ndarray, with_hessian: bool = True) -> FoldSums:
        eta = self.x @ beta
        mu = 1.0 / (1.0 + np.exp(-np.clip(eta, -700.0, 700.0)))
        w = mu * (1.0 - mu)
        loss = np.logaddexp(0.0, eta) - self.y * eta
        k, p = self.fold_count, self.x.shape[1]
        gradient, hessian = np.zeros((k, p)), np.zeros((k, p, p))
        losses, rows, extreme = np.zeros(k), np.zeros(k), np.zeros(k)
        for f in range(k):
            inside = self.folds == f
            xf = self.x[inside]
            gradient[f] = xf.T @ (mu[inside] - self.y[inside])
            hessian[f] = (xf * w[inside, None]).T @ xf
            losses[f] = loss[inside].sum()
            rows[f] = inside.sum()
            extreme[f] = (np.abs(eta[inside]) > EXTREME_ETA).sum()
        return FoldSums(gradient, hessian if with_hessian else None, losses, rows, extreme)

    def eta(self, beta: np.ndarray) -> np.ndarray:
        return self.x @ beta


def fit_one(passes: Passes, columns: int, penalty: Penalty = Penalty(),
            start: "Sequence[float] | ModelFit | None" = None, model: int | None = None) -> ModelFit:
    """Fit one model (by default the one on all rows) from zero, from coefficients, or from a
    previous fit of the same model (its sums reused)."""
    beta = np.zeros(columns) if start is None else start if isinstance(start, ModelFit) else np.asarray(start, dtype=float)
    return fit_models(passes, {model if model is not None else _all_rows(passes): beta}, penalty)[
        model if model is not None else _all_rows(passes)]


def _all_rows(passes: Passes) -> int:
    return int(getattr(passes, "fold_count", 1))
