"""The `fit` step end to end, up to the coefficients: checks → WoE correlations → selection →
λ path with cross-validation (or the unpenalised fit) → inference → a :class:`FitReport`.

Every row-level computation is an aggregate query in the engine (:mod:`.design`) or, on an
engine in this process (DuckDB), numpy over bin numbers binned once in it (:mod:`.streamed`);
the fitting itself works on sums only. The spec itself (scaling, grades, reasons, baseline,
development record) is made by :mod:`.spec_writer`.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Sequence

import numpy as np
from scipy import stats
from sqlglot import exp

from ..engines import Engine
from ..errors import InputError
from ..monitor.statistics import discrimination
from .binning_file import Binning, BinnedFeature
from .design import Design, EnginePasses, check_characteristics, measure_moments
from .folds import check_key_kind
from .newton import CONVERGED, NO_CONVERGENCE, SEPARATION, ModelFit, Penalty, SingularDesignError, fit_one
from .outcome import RowFacts, check_rows, describe_columns, event_expression, plan_columns
from .path import fit_path
from .records import Bin, Characteristic, Discrimination, FitReport, FitSettings, Left, PathStep
from .selection import select, variance_inflation
from .streamed import open_passes

PENALTIES = {"none": None, "l2": 0.0, "l1": 1.0, "elastic": None}
CURVE_POINTS = 50  # ROC points kept for the report: one every 2 % of the development rows
HIGH_IV = 0.5  # above this an IV suggests the outcome leaked into the characteristic (common practice)


@dataclass(frozen=True)
class Fitted:
    """What a fit hands on to the spec: the report, the features (with coefficients) and η's intercept."""

    report: FitReport
    features: tuple
    intercept: float
    facts: RowFacts


def penalty_alpha(penalty: str, alpha: float | None) -> float:
    """α for ``--penalty`` (``l2`` 0, ``l1`` 1, ``elastic`` the given ``--alpha``, default 0.5)."""
    if penalty not in PENALTIES:
        raise InputError(f"--penalty {penalty!r}: give one of none, l2, l1, elastic")
    if penalty == "elastic":
        value = 0.5 if alpha is None else alpha
        if not 0.0 < value < 1.0:
            raise InputError(f"--alpha {value}: an elastic net needs α strictly between 0 (ridge) and 1 (lasso)")
        return value
    if alpha is not None:
        raise InputError("--alpha is for --penalty elastic only (l2 is α = 0, l1 is α = 1)")
    return PENALTIES[penalty] or 0.0


def fit_binning(engine: Engine, source: exp.Expression, table: str, binning: Binning, settings: FitSettings,
                outcome: str | None = None, month_column: str | None = None) -> Fitted:
    """Fit the model of the characteristics in ``binning`` on ``source`` (named ``table``).

    Raises :class:`InputError` for a bad outcome or key, more characteristics than a fit takes
    (before any fitting), a fold with too few events, a collinear design in an unpenalised fit,
    or options that do not fit together.
    """
    check_characteristics(len(binning.features))
    outcome = outcome or binning.outcome
    alpha = settings.alpha
    if settings.penalty != "none" and settings.folds < 2:
        raise InputError("a penalised fit chooses λ by cross-validation: give --folds 2 or more, or --penalty none")
    if settings.folds > 1 and settings.key is None:
        raise InputError("cross-validation folds are made from the key: give --key COLUMN (a unique text or whole "
                         "number column), or --folds 1 with --penalty none")
    columns = describe_columns(engine, source)
    names = [b.feature.column or b.name for b in binning.features]
    missing = [n for n in names if n not in columns]
    if missing:
        raise InputError(f"column {missing[0]!r} of the binning file is not in table {table}")
    month_column = month_column or binning.month_column
    plan = plan_columns(columns, table, outcome, settings.key, month_column if month_column in columns else None,
                        features=names)
    if settings.key is not None:
        check_key_kind(settings.key, columns[settings.key].type_name)
    facts = check_rows(engine, source, plan, table)
    event = event_expression(plan.outcome)

    everything = Design(source, tuple(b.feature for b in binning.features), event, settings.key, 1)
    moments = measure_moments(engine, everything)
    correlation = moments.correlation()
    constant = [bool(v <= 1e-12 * max(1.0, m * m)) for v, m in zip(np.diag(moments.covariance), moments.means)]
    all_names = [b.name for b in binning.features]
    chosen = select(all_names, [b.iv for b in binning.features], correlation, constant, settings.min_iv,
                    settings.max_correlation, settings.keep, settings.drop)
    index = [all_names.index(n) for n in chosen.chosen]
    features = [binning.features[i] for i in index]
    design = Design(source, tuple(b.feature for b in features), event, settings.key, settings.folds)
    with open_passes(engine, design) as passes:
        p = design.columns

        lambdas = [0.0] if settings.penalty == "none" else None
        try:
            path = fit_path(passes, p, settings.folds, alpha, lambdas=lambdas, count=settings.lambdas,
                            ratio=settings.lambda_ratio, metric=settings.cv_metric, one_se=settings.one_se,
                            histograms=passes.histograms)
        except SingularDesignError as error:
            raise InputError(_named(error, features)) from error
        chosen_point = path.chosen_point
        final = chosen_point.fit
        warnings = list(chosen.warnings)

        try:
            # from the smallest λ's fit, the nearest to the unpenalised one (fewer steps than the chosen λ)
            nearest = min(path.points, key=lambda point: point.lam).fit
            plain = final if settings.penalty == "none" else fit_one(passes, p, Penalty(), start=nearest,
                                                                     model=settings.folds)
        except SingularDesignError as error:
            if settings.penalty == "none":
                raise InputError(_named(error, features)) from error
            plain = None
            warnings.append(f"no standard errors: {_named(error, features)}")
        inference = plain is not None and plain.status == CONVERGED
        if plain is not None and plain is not final and plain.status != CONVERGED:
            warnings.append(f"unpenalised fit: {plain.reason}")
        if (facts.rows, facts.events) != (binning.rows, binning.events):
            warnings.append(f"the binning file counted {binning.rows:,} rows and {binning.events:,} events, the table "
                            f"now holds {facts.rows:,} and {facts.events:,}: its WoE may no longer fit; recount it "
                            "(scoremon bin --recount)")
        errors = plain.standard_errors() if inference else None

        vif = variance_inflation(correlation[np.ix_(index, index)])
        rows = []
        for j, binned in enumerate(features, start=1):
            se = float(errors[j]) if errors is not None else None
            z = float(plain.coefficients[j] / se) if se else None
            rows.append(Characteristic(binned.name, binned.iv, float(final.coefficients[j]),
                                       float(plain.coefficients[j]) if inference else None, se, z,
                                       float(2.0 * stats.norm.sf(abs(z))) if z is not None else None, float(vif[j - 1]),
                                       tuple(Bin(c.label, c.rows, c.events, c.event_rate, c.woe) for c in binned.counts)))

        warnings += _warnings(binning, features, final, rows, chosen_point, path)
        if final.status != CONVERGED:
            warnings.append(f"the chosen fit did not converge: {final.reason}")
        report = FitReport(
            table=table, engine=engine.dialect, rows=facts.rows, events=facts.events,
            binning_file=binning.file or "", binning_fingerprint=binning.fingerprint, settings=settings,
            intercept=float(final.coefficients[0]),
            intercept_unpenalised=float(plain.coefficients[0]) if inference else None,
            intercept_standard_error=float(errors[0]) if errors is not None else None,
            characteristics=tuple(rows),
            left_out=tuple(replace(left, iv=binning.feature(left.name).iv) for left in chosen.left_out) + tuple(
                Left(r.name, "coefficient 0 at the chosen λ", r.iv) for r in rows if r.coefficient == 0.0),
            lambda_max=path.lambda_max if settings.penalty != "none" else None,
            chosen_lambda=chosen_point.lam, best_lambda=path.points[path.best].lam,
            path=tuple(PathStep(pt.lam, pt.nonzero, pt.cv_mean, pt.cv_sd, pt.fit.status,
                                tuple(float(b) for b in pt.fit.coefficients[1:])) for pt in path.points)
            if settings.penalty != "none" else (),
            discrimination=_discrimination(passes, chosen_point, settings.folds),
            status=final.status, warnings=tuple(warnings), passes=passes.count)
        kept = tuple(b.spec_feature(c.coefficient) for b, c in zip(features, rows) if c.coefficient != 0.0)
        if not kept:
            raise InputError("every coefficient is 0 at the chosen λ: nothing would score; use a smaller λ ratio, "
                             "--penalty none, or --one-se off")
        return Fitted(report, kept, float(final.coefficients[0]), facts)


def _named(error: SingularDesignError, features: Sequence[BinnedFeature]) -> str:
    names = ["intercept"] + [b.name for b in features]
    listed = ", ".join(names[j] for j in error.columns)
    return (f"the characteristics {listed} are collinear or constant on the development rows; drop one "
            "(--drop) or use --penalty l2 or elastic")


def _discrimination(passes: EnginePasses, point, folds: int) -> Discrimination:
    models = {folds: point.fit.coefficients}
    models.update({m: f.coefficients for m, f in enumerate(point.folds)})
    sums, (roc, ks_point) = passes.histograms_and_curve(models, CURVE_POINTS)
    whole = discrimination(sums[folds])
    held = [discrimination(sums[m]) for m in range(len(point.folds))]
    held = [h for h in held if h is not None]
    if not held:
        return Discrimination(whole.gini, whole.ks, None, None, None, None, roc, ks_point)
    gini, ks = [h.gini for h in held], [h.ks for h in held]
    sd = (lambda v: float(np.std(v, ddof=1)) if len(v) > 1 else None)
    return Discrimination(whole.gini, whole.ks, float(np.mean(gini)), sd(gini), float(np.mean(ks)), sd(ks), roc, ks_point)


def _warnings(binning: Binning, features: Sequence[BinnedFeature], final: ModelFit, rows, point, path) -> list[str]:
    """What a validator would raise (see README, Fitting)."""
    found = []
    for binned, row in zip(features, rows):
        if row.coefficient > 0.0:
            found.append(f"{binned.name}: coefficient {row.coefficient:+.4f} is positive, so the score reverses the "
                         "WoE order (a higher WoE, fewer events, would mean more risk); check the bins or drop it")
    for binned in binning.features:
        if binned.iv > HIGH_IV:
            found.append(f"{binned.name}: IV {binned.iv:.3f} above {HIGH_IV}: check that the characteristic is known "
                         "before the outcome (possible leakage)")
        minimum = binning.settings.min_share
        inner = binned.counts[:len(binned.feature.bins)] if binned.feature.type == "numeric" else \
            binned.counts[:len(binned.feature.groups)]
        for count in inner:
            if binning.rows and count.rows / binning.rows < minimum:
                found.append(f"{binned.name}: bin {count.label} holds {count.rows / binning.rows:.1%} of the rows, "
                             f"under the minimum share {minimum:.0%}")
    statuses = [(pt.lam, f) for pt in path.points for f in (pt.fit,) + pt.folds]
    if any(f.status == SEPARATION for _, f in statuses) or final.status == SEPARATION:
        found.append("quasi-separation: some rows are predicted with probability 0 or 1 and the unpenalised "
                     "coefficients run away; merge the bins that separate or use a penalty")
    stuck = sorted({lam for lam, f in statuses if f.status == NO_CONVERGENCE})
    if stuck:
        found.append(f"no convergence at λ = {', '.join(f'{v:.3g}' for v in stuck)}")
    return found


