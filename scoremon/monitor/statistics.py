"""The statistics of monitoring, computed from small aggregate tables with numpy and scipy.

Nothing here sees a row: every function takes counts or sums that the engine aggregated
(see :mod:`scoremon.monitor.queries`) and returns figures. A figure that cannot be computed
(no rows, no events, a zero variance) is ``None``, never a division by zero.

Sources of the formulas (the tests check each against them):

* PSI = Σ (aᵢ − eᵢ)·ln(aᵢ/eᵢ), the symmetric Kullback–Leibler divergence; bands 0.10 / 0.25
  (common practice). Sample-size-aware critical value (Yurdakul & Naranjo 2020):
  (1/M + 1/N)·χ²_{B−1, q}.
* Jeffreys test (ECB 2019, §2.5): p = F_Beta(D+½, N−D+½)(PD), one-sided, small p means more
  events than the PD predicts. Binomial test: p = P(X ≥ D), X ~ Bin(N, PD).
* Grade-level chi-square (Basel Committee WP 14, 2005): Σ (dᵢ − nᵢPDᵢ)² / (nᵢPDᵢ(1−PDᵢ)),
  degrees of freedom = number of grades tested.
* Spiegelhalter (1986): z = Σ(y−p)(1−2p) / √Σ(1−2p)²p(1−p), two-sided p.
* Brier score = mean (p − y)².
* AUC = P(score of an event < score of a non-event) + ½ P(tie) (a higher score means lower
  risk); Gini = 2·AUC − 1; KS = max |F_event − F_non-event|. Confidence interval from
  DeLong's variance, computed from the placement sums of the score-value histogram.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Sequence

if TYPE_CHECKING:
    import numpy as np

# numpy and scipy are imported inside the functions that use them: importing scipy.stats takes
# most of a second, and `scoremon check` or `scoremon --help` never computes a statistic.

# The one rule for empty bins (no standard exists; common practice is to pick one and say so):
# when a bin is empty on one side (baseline or month), every bin on that side gets half a row
# added before its shares are taken. ln(a/e) then stays finite, a bin that empties still
# counts against stability, and a side with no empty bin is left exactly as it is.
EMPTY_BIN_ROWS = 0.5


def shares_with_empty_bin_rule(rows: Sequence[float]) -> np.ndarray | None:
    """Shares of ``rows`` per bin after the empty-bin rule; ``None`` when there are no rows."""
    import numpy as np

    counts = np.asarray(rows, dtype=float)
    if counts.size == 0 or counts.sum() <= 0:
        return None
    if (counts <= 0).any():
        counts = counts + EMPTY_BIN_ROWS
    return counts / counts.sum()


def psi(actual: Sequence[float], expected: Sequence[float]) -> float:
    """Population stability index Σ (a − e)·ln(a/e) of two share vectors with no zero share.

    Apply :func:`shares_with_empty_bin_rule` first when a bin may be empty.

    >>> round(psi([0.5, 0.5], [0.4, 0.6]), 6)
    0.040546
    """
    import numpy as np

    a = np.asarray(actual, dtype=float)
    e = np.asarray(expected, dtype=float)
    if a.shape != e.shape:
        raise ValueError(f"{a.size} actual shares against {e.size} expected ones")
    if (a <= 0).any() or (e <= 0).any():
        raise ValueError("PSI needs every share above zero; apply the empty-bin rule first")
    return float(np.sum((a - e) * np.log(a / e)))


def psi_critical_value(bins: int, baseline_rows: float, rows: float, confidence: float) -> float | None:
    """(1/M + 1/N)·χ²_{B−1, confidence}: the PSI that sampling alone exceeds with 1 − confidence.

    ``None`` when it is not defined (fewer than two bins, or no rows on a side).
    """
    from scipy import stats

    if bins < 2 or baseline_rows <= 0 or rows <= 0:
        return None
    return float((1.0 / baseline_rows + 1.0 / rows) * stats.chi2.ppf(confidence, bins - 1))


def z_value(confidence: float) -> float:
    """The two-sided standard normal quantile z_{(1+confidence)/2}, e.g. 1.96 at 0.95."""
    from scipy import stats

    return float(stats.norm.ppf(0.5 + confidence / 2.0))


def rate_change_critical_value(rate: float, baseline_rows: float, rows: float, confidence: float) -> float | None:
    """z_{(1+confidence)/2}·√(r(1−r)(1/M + 1/N)): the change of a rate r that sampling alone
    exceeds (two-sided) with 1 − confidence, when baseline and month share the rate r.

    ``None`` without rows on a side; 0 for a rate of 0 or 1 (any change is then real).
    """
    if baseline_rows <= 0 or rows <= 0 or rate is None:
        return None
    spread = max(rate * (1.0 - rate), 0.0) * (1.0 / baseline_rows + 1.0 / rows)
    return z_value(confidence) * math.sqrt(spread)


def points_shift(actual: Sequence[float], expected: Sequence[float], points: Sequence[float]) -> float:
    """Σ (actual − expected)·points over one characteristic's bins: its share of the score shift."""
    import numpy as np

    a, e, p = (np.asarray(v, dtype=float) for v in (actual, expected, points))
    return float(np.sum((a - e) * p))


def _both_tails(upper: float, lower: float) -> float:
    """The equal-tailed two-sided p-value: twice the smaller one-sided tail, at most 1."""
    return min(1.0, 2.0 * min(upper, lower))


def jeffreys_p(rows: int, events: int, pd: float, two_sided: bool = False) -> float | None:
    """Jeffreys p-value: one-sided F_Beta(D+½, N−D+½)(PD), small when events exceed the PD
    (H0: PD ≥ the true rate, ECB 2019 §2.5), so a model that over-estimates reads ok; with
    ``two_sided`` twice the smaller tail, small when events are far above or below the PD."""
    from scipy import stats

    if rows <= 0 or pd is None:
        return None
    upper = float(stats.beta.cdf(pd, events + 0.5, rows - events + 0.5))
    return _both_tails(upper, float(stats.beta.sf(pd, events + 0.5, rows - events + 0.5))) if two_sided else upper


def jeffreys_interval(rows: int, events: int, confidence: float = 0.95) -> tuple[float, float] | None:
    """Equal-tailed Jeffreys interval of an event rate: the Beta(D+½, N−D+½) quantiles at
    (1 ∓ confidence)/2, with the lower end 0 when D = 0 and the upper end 1 when D = N
    (Brown, Cai & DasGupta, Statistical Science 16(2), 2001). ``None`` without rows."""
    from scipy import stats

    if rows <= 0:
        return None
    tail = (1.0 - confidence) / 2.0
    lower = 0.0 if events <= 0 else float(stats.beta.ppf(tail, events + 0.5, rows - events + 0.5))
    upper = 1.0 if events >= rows else float(stats.beta.ppf(1.0 - tail, events + 0.5, rows - events + 0.5))
    return lower, upper


def binomial_p(rows: int, events: int, pd: float, two_sided: bool = False) -> float | None:
    """Binomial p-value for X ~ Bin(N, PD): one-sided P(X ≥ D), small when events exceed the PD;
    with ``two_sided`` twice the smaller of P(X ≥ D) and P(X ≤ D)."""
    from scipy import stats

    if rows <= 0 or pd is None:
        return None
    upper = float(stats.binom.sf(events - 1, rows, pd))
    return _both_tails(upper, float(stats.binom.cdf(events, rows, pd))) if two_sided else upper


@dataclass(frozen=True)
class ChiSquare:
    """A chi-square statistic with its degrees of freedom and upper-tail p-value."""

    statistic: float
    degrees_of_freedom: int
    p_value: float


def grade_chi_square(rows: Sequence[int], events: Sequence[int], pds: Sequence[float]) -> ChiSquare | None:
    """Σ (dᵢ − nᵢPDᵢ)² / (nᵢPDᵢ(1−PDᵢ)) over the grades that have rows and a non-zero variance.

    Degrees of freedom = the number of grades counted (the test is out of sample). ``None``
    when no grade can be counted.
    """
    from scipy import stats

    statistic, counted = 0.0, 0
    for n, d, p in zip(rows, events, pds):
        if n <= 0 or p is None:
            continue
        variance = n * p * (1.0 - p)
        if variance <= 0.0:  # a PD of exactly 0 or 1 (an extreme η) has no binomial spread
            continue
        statistic += (d - n * p) ** 2 / variance
        counted += 1
    if counted == 0:
        return None
    return ChiSquare(statistic, counted, float(stats.chi2.sf(statistic, counted)))


@dataclass(frozen=True)
class Spiegelhalter:
    """Spiegelhalter's z and its two-sided p-value."""

    z: float
    p_value: float


def spiegelhalter(numerator: float, variance: float) -> Spiegelhalter | None:
    """z = Σ(y−p)(1−2p) / √Σ(1−2p)²p(1−p) from the two sums; ``None`` for a zero variance."""
    from scipy import stats

    if variance is None or variance <= 0.0:
        return None
    z = numerator / math.sqrt(variance)
    return Spiegelhalter(float(z), float(2.0 * stats.norm.sf(abs(z))))


def brier(squared_error_sum: float, rows: int) -> float | None:
    """Mean (p − y)² from its sum."""
    return None if rows <= 0 else float(squared_error_sum / rows)


@dataclass(frozen=True)
class HistogramSums:
    """What the engine returns per month from the score-value histogram (counts as floats).

    With bᵥ events and gᵥ non-events at score value v, Bᵥ and Gᵥ their running totals up to
    and including v, B and G the month's totals:

    * ``pairs`` = Σᵥ bᵥ·(G − Gᵥ + ½gᵥ): event/non-event pairs the score orders right, ties ½;
    * ``gap_high`` / ``gap_low`` = max / min over v of Bᵥ·G − Gᵥ·B (KS = max |·| / (B·G));
    * ``event_placement_squares`` = Σᵥ bᵥ·(G − Gᵥ + ½gᵥ)²;
    * ``non_event_placement_squares`` = Σᵥ gᵥ·(Bᵥ − ½bᵥ)² (Σᵥ gᵥ·(Bᵥ − ½bᵥ) equals ``pairs``).
    """

    events: float
    non_events: float
    pairs: float
    gap_high: float
    gap_low: float
    event_placement_squares: float
    non_event_placement_squares: float


@dataclass(frozen=True)
class Discrimination:
    """AUC with a DeLong confidence interval, Gini and KS."""

    auc: float
    auc_lower: float | None
    auc_upper: float | None
    auc_standard_error: float | None
    gini: float
    ks: float


def discrimination(sums: HistogramSums, confidence: float = 0.95) -> Discrimination | None:
    """AUC, its DeLong interval, Gini and KS from :class:`HistogramSums`; ``None`` without both classes.

    DeLong, DeLong & Clarke-Pearson (1988): with placements V₁₀ (per event, the share of
    non-events it is ranked below, ties ½) and V₀₁ (per non-event, the share of events ranked
    below it), Var(AUC) = S₁₀/B + S₀₁/G with S the sample variances of the placements.
    """
    b, g = sums.events, sums.non_events
    if b <= 0 or g <= 0:
        return None
    auc = sums.pairs / (b * g)
    ks = max(abs(sums.gap_high), abs(sums.gap_low)) / (b * g)
    standard_error = lower = upper = None
    if b > 1 and g > 1:
        # Σ b·(V₁₀ − A)² = Σ b·V₁₀² − B·A², with V₁₀ = placement / G (and likewise for V₀₁)
        s10 = (sums.event_placement_squares / g**2 - b * auc**2) / (b - 1)
        s01 = (sums.non_event_placement_squares / b**2 - g * auc**2) / (g - 1)
        variance = max(s10, 0.0) / b + max(s01, 0.0) / g
        standard_error = math.sqrt(variance)
        half_width = z_value(confidence) * standard_error
        lower, upper = max(0.0, auc - half_width), min(1.0, auc + half_width)
    return Discrimination(float(auc), lower, upper, standard_error, float(2.0 * auc - 1.0), float(ks))
