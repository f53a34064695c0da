"""Fit version 1 of the demo model on the development table and write ``spec_v1.yaml``.

Run ``python -m demo_warehouse.fit_spec`` (it builds the default demo book in a temporary
folder first) or ``python -m demo_warehouse.fit_spec --db FILE`` for a book already built.
The committed ``demo_warehouse/spec_v1.yaml`` is this script's output on the default book;
running it again reproduces the file.

The steps, in the order a scorecard developer would take them:

1. **Bins.** A numeric characteristic starts from its development deciles, with edges rounded
   to two significant digits so a reviewer can read them. Adjacent bins are merged until each
   holds at least 5 % of the sample (common practice) and WoE runs one way only, so that the
   points never reward, say, a higher utilisation. A categorical characteristic starts with one
   group per value; groups are ordered by WoE and the smallest is merged into its nearest
   neighbour until each holds 5 %.
2. **WoE** per bin is ln(%good / %bad), with half a count added to both sides so an empty side
   stays finite. A higher WoE means lower risk. NULL (and NaN) rows form a missing bin with
   their own WoE when at least 0.5 % of the sample is missing; otherwise, and for the
   catch-all group that takes categories never seen in development, the riskiest bin's WoE
   is used, so an unknown value never earns points it has not shown it deserves.
3. **Selection.** Age and region stay out of the model by policy: age is a protected
   characteristic in many fair-lending regimes and region can stand in for protected groups.
   Characteristics with an information value below 0.02 (common practice: no predictive
   power) are left out.
4. **Fit.** A logistic regression of the event on the WoE columns (plus ``months_at_address``
   as one clipped linear term with a missing indicator) by Newton–Raphson in numpy. A
   characteristic whose coefficient has the wrong sign (positive: more WoE, more risk) or is
   not significant at 5 % is dropped and the model refitted, one at a time.
5. **Scaling and grades.** 600 points at good:bad odds of 50:1, 20 points to double the odds,
   points rounded per bin. Seven grades, each one PDO (20 points) wide in the middle, so the
   odds double from one grade to the next.
"""
from __future__ import annotations

import argparse
import json
import math
import sys
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import duckdb
import numpy as np
from scipy import stats

from scoremon.errors import ScoremonError

from . import generate

SPEC_PATH = Path(__file__).with_name("spec_v1.yaml")
MIN_BIN_SHARE = 0.05
MIN_MISSING_SHARE = 0.005
MIN_INFORMATION_VALUE = 0.02
MIN_WOE_GAP = 0.05  # categorical groups closer than this in WoE tell nothing apart; merged
SIGNIFICANCE = 0.05
DECILES = np.arange(1, 10) / 10
DECIMALS = 4

EXCLUDED_BY_POLICY = {
    "age": "protected under many fair-lending rules; kept in the table for fairness reviews",
    "region": "can stand in for protected groups; kept in the table for segment reports",
}
NUMERIC = ("bureau_score", "delinquencies_24m", "revolving_utilisation", "debt_to_income", "monthly_income",
           "enquiries_6m", "months_in_job", "open_accounts", "loan_amount", "term_months")
CATEGORICAL = ("product", "channel", "housing")
LINEAR = "months_at_address"
LINEAR_CLIP = (0.0, 240.0)  # beyond 20 years at an address tells nothing more
LINEAR_CENTER, LINEAR_SCALE = 60.0, 12.0  # per year above or below five years

DESCRIPTIONS = {
    "bureau_score": "Credit bureau score at application (300 to 900); NULL for a thin file.",
    "delinquencies_24m": "Payments 30 or more days late on other credit in the last 24 months.",
    "revolving_utilisation": "Revolving balances over revolving limits; NULL without revolving credit, "
                             "NaN where the bureau divided by a zero limit.",
    "debt_to_income": "Monthly repayments, this loan included, over monthly income; NULL without income.",
    "monthly_income": "Stated monthly income, nominal.",
    "enquiries_6m": "Credit enquiries by other lenders in the last 6 months.",
    "months_in_job": "Months with the current employer, from the employment-data feed.",
    "open_accounts": "Open credit accounts at the bureau.",
    "loan_amount": "Amount applied for.",
    "term_months": "Term applied for, in months.",
    "months_at_address": "Months at the current address.",
    "product": "Product applied for.",
    "channel": "Sales channel of the application.",
    "housing": "Housing status as stated.",
}

# Reason statements: (code, text, features). A statement keeps the features the fit kept and
# is dropped if none are left. Product and channel give no reason: they describe the sale,
# not the applicant.
STATEMENTS = (
    ("R01", "Credit bureau score is low or the credit file is thin", ("bureau_score",)),
    ("R02", "Recent late payments on other credit", ("delinquencies_24m",)),
    ("R03", "High use of revolving credit limits", ("revolving_utilisation",)),
    ("R04", "Repayments are high relative to income", ("debt_to_income", "monthly_income")),
    ("R05", "Several recent applications for credit elsewhere", ("enquiries_6m",)),
    ("R06", "Short time in current job or at current address", ("months_in_job", "months_at_address")),
    ("R07", "Size or length of the loan applied for", ("loan_amount", "term_months")),
    ("R08", "Housing status", ("housing",)),
    ("R09", "Number of open credit accounts", ("open_accounts",)),
)
REASON_COUNT = 4  # common practice: at most four principal reasons go to an applicant

BASE_SCORE, BASE_ODDS, PDO = 600, 50, 20
GRADE_EDGES = (640, 620, 600, 580, 560, 540)  # between A|B, B|C, …, F|G
GRADE_NAMES = ("A", "B", "C", "D", "E", "F", "G")

IDENTITY = {
    "name": "quillfield_retail_pd",
    "owner": "Retail Credit Risk, Quillfield Credit (invented)",
    "effective_date": "2026-06-01",
    "intended_use": ("Decision support for unsecured and car loan applications at Quillfield Credit "
                     "(personal, car, home improvement, debt consolidation): an underwriter reviews every "
                     "decline and every application in grades F and G."),
    "event": ("90 or more days past due on this loan at any time within 12 months of the "
              "application month (bad_12m = 1)."),
    "description": ("Application PD scorecard for Quillfield Credit, an invented lender in scoremon's demo; "
                    "fitted on the 2024-05 to 2025-04 cohorts."),
}


READ_DEVELOPMENT = "SELECT * FROM development ORDER BY application_id"


class FitError(ScoremonError):
    """The development data cannot be fitted as this script expects."""


# ---------------------------------------------------------------- data

@dataclass
class Development:
    outcome: np.ndarray
    numbers: dict[str, np.ndarray]  # NaN marks missing (NULL or NaN alike: both go to the missing bin)
    texts: dict[str, np.ndarray]  # None marks NULL
    first_month: str
    last_month: str


def read_development(database: Path) -> Development:
    """The development table's outcome and candidate characteristics."""
    try:
        connection = duckdb.connect(str(database), read_only=True)
    except duckdb.Error as error:
        raise FitError(f"{database}: cannot open the demo database ({error}); build it with scoremon demo") from error
    try:
        frame = connection.execute(READ_DEVELOPMENT).df()
    except duckdb.Error as error:
        raise FitError(f"{database}: no readable development table ({error}); rebuild the demo book") from error
    finally:
        connection.close()
    outcome = frame[generate.OUTCOME_COLUMN]
    if outcome.isna().any():
        raise FitError("the development table has rows without an outcome; every development row must be mature")
    numbers = {name: frame[name].to_numpy(dtype=float, na_value=np.nan) for name in NUMERIC + (LINEAR,)}
    texts = {name: np.array([None if v is None or v != v else str(v) for v in frame[name].astype(object)], dtype=object)
             for name in CATEGORICAL}
    months = frame[generate.MONTH_COLUMN]
    return Development(outcome.to_numpy(dtype=float), numbers, texts,
                       str(months.min())[:7], str(months.max())[:7])


# ---------------------------------------------------------------- WoE and bins

def woe(goods: np.ndarray, bads: np.ndarray, total_goods: float, total_bads: float) -> np.ndarray:
    """ln(%good / %bad) per bin, half a count added to each side."""
    return np.log(((goods + 0.5) / total_goods) / ((bads + 0.5) / total_bads))


def information_value(goods: np.ndarray, bads: np.ndarray, total_goods: float, total_bads: float) -> float:
    """Σ (%good − %bad) · WoE over the bins."""
    share_good, share_bad = (goods + 0.5) / total_goods, (bads + 0.5) / total_bads
    return float(np.sum((share_good - share_bad) * np.log(share_good / share_bad)))


def two_digits(value: float) -> float:
    """``value`` rounded to two significant digits (edges a reviewer can read)."""
    if value == 0:
        return 0.0
    digits = 1 - int(math.floor(math.log10(abs(value))))
    return round(value, digits)


@dataclass
class Binned:
    """A characteristic's bins as fitted: labels, rows per bin, WoE, and each row's WoE."""

    name: str
    kind: str
    edges: list[float] = field(default_factory=list)  # numeric: inner edges, increasing
    groups: list[list[str]] = field(default_factory=list)  # categorical: values per group
    bin_woe: list[float] = field(default_factory=list)
    bin_share: list[float] = field(default_factory=list)
    missing_share: float = 0.0
    missing_woe: float = 0.0
    missing_own: bool = True
    iv: float = 0.0
    row_woe: np.ndarray | None = None


def _counts(index: np.ndarray, y: np.ndarray, size: int) -> tuple[np.ndarray, np.ndarray]:
    bads = np.bincount(index, weights=y, minlength=size)
    return np.bincount(index, minlength=size) - bads, bads


def bin_numeric(name: str, x: np.ndarray, y: np.ndarray) -> Binned:
    """Decile bins merged to ≥ 5 % each and one-way WoE (see the module docstring)."""
    present = ~np.isnan(x)
    total_goods, total_bads = float(np.sum(1 - y)), float(np.sum(y))
    values, outcome = x[present], y[present]
    edges = sorted({two_digits(q) for q in np.quantile(values, DECILES)})
    edges = [e for e in edges if values.min() < e <= values.max()]

    def table(edges):
        goods, bads = _counts(np.searchsorted(edges, values, side="right"), outcome, len(edges) + 1)
        return goods, bads, woe(goods, bads, total_goods, total_bads)

    while edges:  # merge the smallest bin into its smaller neighbour until each is ≥ 5 %
        goods, bads, _ = table(edges)
        shares = (goods + bads) / len(y)
        smallest = int(np.argmin(shares))
        if shares[smallest] >= MIN_BIN_SHARE:
            break
        if smallest == 0:
            del edges[0]
        elif smallest == len(shares) - 1 or shares[smallest - 1] <= shares[smallest + 1]:
            del edges[smallest - 1]
        else:
            del edges[smallest]
    goods, bads, values_woe = table(edges)
    direction = np.sign(np.corrcoef(np.arange(len(values_woe)), values_woe)[0, 1]) if edges else 1.0
    while edges:  # merge the first adjacent pair whose WoE turns against the overall direction
        goods, bads, values_woe = table(edges)
        turns = [i for i in range(len(edges)) if direction * (values_woe[i + 1] - values_woe[i]) <= 0]
        if not turns:
            break
        del edges[turns[0]]
    goods, bads, values_woe = table(edges)
    result = Binned(name, "numeric", edges=edges, bin_woe=list(values_woe),
                    bin_share=list((goods + bads) / len(y)))
    _missing_bin(result, ~present, y, total_goods, total_bads, goods, bads)
    row_index = np.searchsorted(edges, np.nan_to_num(x, nan=0.0), side="right")
    result.row_woe = np.where(present, np.asarray(values_woe)[row_index], result.missing_woe)
    return result


def bin_categorical(name: str, x: np.ndarray, y: np.ndarray) -> Binned:
    """Groups of values in WoE order, merged until each holds ≥ 5 % and WoE gaps are ≥ 0.05."""
    present = np.array([v is not None for v in x])
    total_goods, total_bads = float(np.sum(1 - y)), float(np.sum(y))
    values = sorted({v for v in x[present]})

    def group_table(groups):
        lookup = {v: g for g, members in enumerate(groups) for v in members}
        index = np.array([lookup[v] for v in x[present]])
        goods, bads = _counts(index, y[present], len(groups))
        return goods, bads, woe(goods, bads, total_goods, total_bads)

    groups = [[v] for v in values]
    while len(groups) > 1:  # merge the smallest group into its WoE neighbour until each is ≥ 5 %
        goods, bads, group_woe = group_table(groups)
        order = list(np.argsort(group_woe, kind="stable"))
        groups = [groups[i] for i in order]
        goods, bads, group_woe = goods[order], bads[order], group_woe[order]
        shares = (goods + bads) / len(y)
        smallest = int(np.argmin(shares))
        if shares[smallest] >= MIN_BIN_SHARE:
            break
        if smallest == 0:
            partner = 1
        elif smallest == len(groups) - 1:
            partner = smallest - 1
        else:  # the neighbour nearest in WoE
            below = group_woe[smallest] - group_woe[smallest - 1]
            above = group_woe[smallest + 1] - group_woe[smallest]
            partner = smallest - 1 if below <= above else smallest + 1
        low, high = sorted((smallest, partner))
        groups[low:high + 1] = [sorted(groups[low] + groups[high])]
    while len(groups) > 1:
        goods, bads, group_woe = group_table(groups)
        gaps = np.diff(group_woe)
        closest = int(np.argmin(gaps))
        if gaps[closest] >= MIN_WOE_GAP:
            break
        groups[closest:closest + 2] = [sorted(groups[closest] + groups[closest + 1])]
    goods, bads, group_woe = group_table(groups)
    result = Binned(name, "categorical", groups=groups, bin_woe=list(group_woe),
                    bin_share=list((goods + bads) / len(y)))
    _missing_bin(result, ~present, y, total_goods, total_bads, goods, bads)
    lookup = {v: group_woe[g] for g, members in enumerate(groups) for v in members}
    result.row_woe = np.array([lookup[v] if v is not None else result.missing_woe for v in x])
    return result


def _missing_bin(result: Binned, missing: np.ndarray, y, total_goods, total_bads, goods, bads) -> None:
    result.missing_share = float(missing.mean())
    missing_goods, missing_bads = float(np.sum(1 - y[missing])), float(np.sum(y[missing]))
    result.missing_own = result.missing_share >= MIN_MISSING_SHARE
    if result.missing_own:
        result.missing_woe = float(woe(np.array([missing_goods]), np.array([missing_bads]), total_goods, total_bads)[0])
        goods, bads = np.append(goods, missing_goods), np.append(bads, missing_bads)
    else:
        result.missing_woe = float(min(result.bin_woe))
    result.iv = information_value(goods, bads, total_goods, total_bads)


def linear_column(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(clip(x) − center) / scale, 0 where missing; and the missing indicator."""
    missing = np.isnan(x)
    clipped = np.clip(np.nan_to_num(x, nan=LINEAR_CENTER), *LINEAR_CLIP)
    return np.where(missing, 0.0, (clipped - LINEAR_CENTER) / LINEAR_SCALE), missing.astype(float)


# ---------------------------------------------------------------- the regression

@dataclass
class Fit:
    names: list[str]
    coefficients: np.ndarray
    standard_errors: np.ndarray
    iterations: int

    @property
    def p_values(self) -> np.ndarray:
        return 2 * stats.norm.sf(np.abs(self.coefficients / self.standard_errors))


def newton_raphson(design: np.ndarray, y: np.ndarray, names: list[str], tolerance: float = 1e-10,
                   most_iterations: int = 50) -> Fit:
    """Maximum-likelihood logistic regression: β ← β + (XᵀWX)⁻¹ Xᵀ(y − μ), W = μ(1 − μ)."""
    failure = FitError(f"the logistic regression did not converge in {most_iterations} Newton steps; look for "
                       "a characteristic that separates the outcome perfectly or a column that repeats another")
    beta = np.zeros(design.shape[1])
    beta[0] = math.log(y.mean() / (1 - y.mean()))  # start from the base rate: the intercept-only fit
    try:
        for iteration in range(1, most_iterations + 1):
            mu = 1 / (1 + np.exp(-(design @ beta)))
            hessian = design.T @ (design * (mu * (1 - mu))[:, None])
            step = np.linalg.solve(hessian, design.T @ (y - mu))
            beta = beta + step
            if np.max(np.abs(step)) < tolerance:
                mu = 1 / (1 + np.exp(-(design @ beta)))
                hessian = design.T @ (design * (mu * (1 - mu))[:, None])
                return Fit(names, beta, np.sqrt(np.diag(np.linalg.inv(hessian))), iteration)
    except np.linalg.LinAlgError as error:  # a singular Hessian: separation pushes μ to 0 or 1
        raise failure from error
    raise failure


def fit_model(binned: dict[str, Binned], development: Development) -> tuple[Fit, list[str]]:
    """Fit, then drop wrong-signed or insignificant characteristics one at a time."""
    y = development.outcome
    linear_value, linear_missing = linear_column(development.numbers[LINEAR])
    kept = list(binned)
    dropped = []
    while True:
        columns = [np.ones_like(y)] + [binned[name].row_woe for name in kept] + [linear_value, linear_missing]
        names = ["intercept"] + kept + [LINEAR, f"{LINEAR}:missing"]
        fit = newton_raphson(np.column_stack(columns), y, names)
        woe_terms = range(1, len(kept) + 1)
        wrong = [i for i in woe_terms if fit.coefficients[i] >= 0]
        weak = [i for i in woe_terms if fit.p_values[i] > SIGNIFICANCE]
        worst = wrong or sorted(weak, key=lambda i: -fit.p_values[i])
        if not worst:
            return fit, dropped
        reason = "wrong sign" if wrong else f"p = {fit.p_values[worst[0]]:.2f}"
        dropped.append(f"{kept[worst[0] - 1]} ({reason})")
        del kept[worst[0] - 1]


# ---------------------------------------------------------------- writing the YAML

def number(value: float) -> str:
    if value == math.inf:
        return ".inf"
    if value == -math.inf:
        return "-.inf"
    if float(value).is_integer():
        return str(int(value))
    return repr(float(value))


def rounded(value: float) -> str:
    return number(round(float(value), DECIMALS) + 0.0)  # + 0.0 turns -0.0 into 0.0


def text(value: str) -> str:
    """A YAML scalar for ``value``: plain when safe, else double-quoted (JSON quoting is YAML's)."""
    plain = value.replace("_", "").isalnum() and not value[0].isdigit()
    return value if plain else json.dumps(value)


def wrapped(value: str, width: int) -> list[str]:
    words, lines, line = value.split(), [], ""
    for word in words:
        if line and len(line) + 1 + len(word) > width:
            lines.append(line)
            line = word
        else:
            line = f"{line} {word}" if line else word
    return lines + [line]


def folded(key: str, value: str, indent: int, width: int = 96) -> list[str]:
    """A folded YAML block (``key: >-``) wrapped to ``width``."""
    pad = " " * indent
    return [f"{pad}{key}: >-"] + [f"{pad}  {part}" for part in wrapped(value, width - indent - 2)]


def comment(value: str, width: int = 96) -> list[str]:
    return [f"# {part}" for part in wrapped(value, width - 2)]


def render_spec(development: Development, binned: dict[str, Binned], fit: Fit, dropped: list[str],
                weak: list[str], grade_shares: list[float], gini: float) -> str:
    """The spec as YAML text with comments for a reviewer."""
    y = development.outcome
    coefficient = dict(zip(fit.names, fit.coefficients))
    kept = [name for name in binned if name in coefficient]
    out = [
        "# Quillfield Credit: retail application PD scorecard, version 1.",
        "#",
        "# Quillfield Credit is an invented consumer lender in scoremon's demo; every number below was",
        "# fitted on invented data. Written by demo_warehouse/fit_spec.py (run it to reproduce this",
        "# file; edit the script, not the file).",
        "#",
        f"# Development sample: {len(y):,} applications, cohorts {development.first_month} to {development.last_month}.",
        f"# Development event rate {y.mean():.2%}; Gini {gini:.3f} (scores as rounded below).",
        "# WoE = ln(%good / %bad): a higher WoE means lower risk, so fitted coefficients are negative.",
        "# Bins start at development deciles (edges to two significant digits) and are merged until",
        "# each holds at least 5 % of the sample and WoE runs one way. NULL goes to the missing bin;",
        "# where under 0.5 % of the sample was missing, and for categories never seen in",
        "# development (the `other` group), the riskiest bin's WoE is used.",
    ]
    out += comment("Left out by policy: " + "; ".join(f"{k} ({v})" for k, v in EXCLUDED_BY_POLICY.items()) + ".")
    if weak:
        out += comment("Left out, information value below 0.02: " + ", ".join(weak) + ".")
    if dropped:
        out += comment("Left out after fitting: " + ", ".join(dropped) + ".")
    out.append("")
    out.append("model:")
    out.append(f"  name: {IDENTITY['name']}")
    out.append("  version: 1")
    out += folded("description", IDENTITY["description"], 2)
    out.append(f"  owner: {text(IDENTITY['owner'])}")
    out.append(f"  effective_date: {IDENTITY['effective_date']}")
    out += folded("intended_use", IDENTITY["intended_use"], 2)
    out += folded("event", IDENTITY["event"], 2)
    out.append(f"  performance_window_months: {generate.PERFORMANCE_WINDOW_MONTHS}")
    out += ["", f"intercept: {rounded(coefficient['intercept'])}", ""]
    out += ["# 600 points at good:bad odds of 50:1; 20 points double the odds.", "scaling:",
            f"  base_score: {BASE_SCORE}", f"  base_odds: {BASE_ODDS}", f"  pdo: {PDO}", "  rounding: per_bin", ""]
    out.append("features:")
    for name in kept:
        b = binned[name]
        missing_note = (f"missing {b.missing_share:.1%}" if b.missing_own
                        else f"missing {b.missing_share:.2%}, riskiest bin's WoE")
        out.append(f"  # IV {b.iv:.3f}; {missing_note}; bin shares "
                   + " ".join(f"{s:.0%}" for s in b.bin_share))
        out.append(f"  - name: {name}")
        out.append(f"    type: {b.kind}")
        out.append(f"    description: {text(DESCRIPTIONS[name])}")
        out.append(f"    coefficient: {rounded(coefficient[name])}")
        if b.kind == "numeric":
            out.append("    closed: lower  # bins are [lower, upper)")
            lowers = [-math.inf] + b.edges
            uppers = b.edges + [math.inf]
            out.append("    bins:")
            for lower, upper, value in zip(lowers, uppers, b.bin_woe):
                out.append(f"      - {{lower: {number(lower)}, upper: {number(upper)}, woe: {rounded(value)}}}")
            out.append(f"    missing: {{woe: {rounded(b.missing_woe)}}}")
            if name == "revolving_utilisation":
                out.append("    nan: missing  # NaN from a zero limit is treated as no revolving credit")
        else:
            out.append("    groups:")
            for members, value in zip(b.groups, b.bin_woe):
                label = "_or_".join(members)
                values = ", ".join(text(v) for v in members)
                out.append(f"      - {{label: {text(label)}, values: [{values}], woe: {rounded(value)}}}")
            out.append(f"    other: {{label: other, woe: {rounded(min(b.bin_woe))}}}  # unseen categories: riskiest WoE")
            out.append(f"    missing: {{woe: {rounded(b.missing_woe)}}}")
    out.append(f"  # A linear term: log-odds {rounded(coefficient[LINEAR])} per year above five years at the address,")
    out.append(f"  # clipped to 0..{number(LINEAR_CLIP[1])} months; missing {np.isnan(development.numbers[LINEAR]).mean():.1%}.")
    out.append(f"  - name: {LINEAR}")
    out.append("    type: linear")
    out.append(f"    description: {text(DESCRIPTIONS[LINEAR])}")
    out.append(f"    coefficient: {rounded(coefficient[LINEAR])}")
    out.append(f"    lower: {number(LINEAR_CLIP[0])}")
    out.append(f"    upper: {number(LINEAR_CLIP[1])}")
    out.append(f"    center: {number(LINEAR_CENTER)}")
    out.append(f"    scale: {number(LINEAR_SCALE)}")
    out.append(f"    missing: {{log_odds: {rounded(coefficient[LINEAR + ':missing'])}}}")
    out += ["", "# Grades one PDO wide: the odds double from one grade to the next. Development shares:",
            "# " + ", ".join(f"{g} {s:.1%}" for g, s in zip(GRADE_NAMES, grade_shares)) + ".", "grades:"]
    uppers = (math.inf,) + GRADE_EDGES
    lowers = GRADE_EDGES + (-math.inf,)
    for grade, lower, upper in zip(GRADE_NAMES, lowers, uppers):
        out.append(f"  - {{name: {grade}, lower: {number(lower)}, upper: {number(upper)}}}")
    out += ["", "# Reasons: the statements whose features fall furthest below their best points.",
            "reasons:", f"  count: {REASON_COUNT}", "  statements:"]
    model_features = set(kept) | {LINEAR}
    for code, statement, features in STATEMENTS:
        present = [f for f in features if f in model_features]
        if present:
            out.append(f"    - {{code: {code}, text: {text(statement)}, features: [{', '.join(present)}]}}")
    return "\n".join(out) + "\n"


# ---------------------------------------------------------------- scores for the comments

def round_half_away(values: np.ndarray) -> np.ndarray:
    return np.sign(values) * np.floor(np.abs(values) + 0.5)


def development_scores(binned: dict[str, Binned], fit: Fit, development: Development) -> np.ndarray:
    """Each development row's score under the rounded spec (per-bin rounding, as the spec says)."""
    factor = PDO / math.log(2)
    offset = BASE_SCORE - factor * math.log(BASE_ODDS)
    coefficient = {n: round(float(c), DECIMALS) for n, c in zip(fit.names, fit.coefficients)}
    score = np.full(len(development.outcome), round_half_away(np.array(offset - factor * coefficient["intercept"])))
    for name, b in binned.items():
        if name in coefficient:
            score = score + round_half_away(-factor * coefficient[name] * np.round(b.row_woe, DECIMALS))
    value, missing = linear_column(development.numbers[LINEAR])
    linear_points = round_half_away(-factor * coefficient[LINEAR] * value)
    missing_points = round_half_away(np.array(-factor * coefficient[LINEAR + ":missing"]))
    return score + np.where(missing == 1, missing_points, linear_points)


def gini(score: np.ndarray, outcome: np.ndarray) -> float:
    """2·AUC − 1, AUC = P(a bad scores below a good) + ½ P(tie), from ranks."""
    ranks = stats.rankdata(-score)  # a higher rank is a lower score, i.e. riskier
    bads = outcome == 1
    auc = (ranks[bads].sum() - bads.sum() * (bads.sum() + 1) / 2) / (bads.sum() * (~bads).sum())
    return 2 * auc - 1


def fit_spec(database: Path) -> str:
    """The spec text fitted on ``database``'s development table."""
    development = read_development(database)
    y = development.outcome
    candidates = {name: bin_numeric(name, development.numbers[name], y) for name in NUMERIC}
    candidates.update({name: bin_categorical(name, development.texts[name], y) for name in CATEGORICAL})
    candidates = dict(sorted(candidates.items(), key=lambda item: -item[1].iv))
    weak = [f"{n} ({b.iv:.3f})" for n, b in candidates.items() if b.iv < MIN_INFORMATION_VALUE]
    binned = {n: b for n, b in candidates.items() if b.iv >= MIN_INFORMATION_VALUE}
    fit, dropped = fit_model(binned, development)
    scores = development_scores(binned, fit, development)
    edges = np.array((math.inf,) + GRADE_EDGES + (-math.inf,))
    grade_shares = [float(np.mean((scores >= low) & (scores < high))) for high, low in zip(edges, edges[1:])]
    return render_spec(development, binned, fit, dropped, weak, grade_shares, gini(scores, y))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m demo_warehouse.fit_spec", description=__doc__.splitlines()[0])
    parser.add_argument("--db", help="a demo book built by scoremon demo (default: build the default book now)")
    parser.add_argument("--out", default=str(SPEC_PATH), help=f"where to write the spec (default: {SPEC_PATH})")
    args = parser.parse_args(argv)
    try:
        if args.db:
            spec = fit_spec(Path(args.db))
        else:
            with tempfile.TemporaryDirectory(prefix="scoremon-fit-") as folder:
                book = generate.build_warehouse(Path(folder) / "book.duckdb")
                spec = fit_spec(book.database)
    except ScoremonError as error:
        print(f"error: {error}", file=sys.stderr)
        return 2
    Path(args.out).write_text(spec, encoding="utf-8")
    print(f"wrote {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
