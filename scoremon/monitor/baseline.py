"""The baseline: the development distribution a model was approved on, measured in the engine.

:func:`measure_baseline` runs the aggregate passes of :mod:`scoremon.monitor.queries` over the
development rows (a development table, or a range of months of the monitored table) and
returns a :class:`~scoremon.spec.model.Baseline`. :func:`spec_text_with_baseline` writes it
into a copy of a spec file's text, keeping every other line as it was.

Score bands are the development score's deciles: the band edges are the lowest score values
with at least 10 %, 20 %, …, 90 % of development rows strictly below them; repeated edges
(ties at a score value) are merged, so a heavily tied score gets fewer bands. Bands are
``[lower, upper)``, the first open below, the last open above.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass
from datetime import date, datetime, timezone
from pathlib import Path
from typing import Sequence

import yaml
from sqlglot import exp

from .. import files
from ..errors import InputError
from ..spec.canonical import fingerprint
from ..spec.loading import parse_spec
from ..spec.model import LINEAR_LABELS, Baseline, BaselineBand, LinearFeature, Spec
from ..spec.terms import feature_terms
from . import queries
from .months import sort_months
from .passes import BinCounts, bin_counts, decile_edges, histogram_sums, month_sums
from .queries import MonitoredRows
from .statistics import discrimination

# Below this many development rows `scoremon baseline` warns. With 1,000 rows a 5 % bin holds
# about 50 rows, and the baseline's own sampling noise in a PSI over ten score bands,
# (1/M)·χ²(9, 0.95) = 0.017, stays well below the 0.10 watch level; with fewer rows it takes a
# growing part of every month's PSI (Yurdakul & Naranjo 2020 for the critical value).
MINIMUM_BASELINE_ROWS = 1_000


def small_baseline_warning(rows: int) -> str | None:
    """The warning for a baseline measured on fewer than :data:`MINIMUM_BASELINE_ROWS` rows, or None."""
    if rows >= MINIMUM_BASELINE_ROWS:
        return None
    return (f"warning: the baseline rests on {rows:,} rows, fewer than {MINIMUM_BASELINE_ROWS:,}; its own sampling "
            "noise will show in every PSI; measure it on more development rows")


@dataclass(frozen=True)
class BinLabel:
    """A bin of a feature as monitoring reads it: its label and its points (None when they vary)."""

    label: str
    points: float | None


def feature_bins(spec: Spec, feature) -> list[BinLabel]:
    """A feature's bins in the spec's order (the order of :func:`~scoremon.spec.terms.feature_terms`).

    A linear term's rows are labelled clipped_low / in_range / clipped_high / its missing label;
    only the missing bin has fixed points.
    """
    terms = feature_terms(spec, feature)
    if isinstance(feature, LinearFeature):
        return [BinLabel(label, None) for label in LINEAR_LABELS] + [BinLabel(terms.bins[-1].label, terms.bins[-1].points)]
    return [BinLabel(b.label, b.points) for b in terms.bins]


def band_edges(bands: Sequence[BaselineBand]) -> list[float]:
    """The inner edges of score bands ordered by their lower edge."""
    ordered = sorted(bands, key=lambda b: b.lower)
    return [b.lower for b in ordered[1:]]


def measure_baseline(engine, spec: Spec, rows: MonitoredRows, relation: exp.Expression,
                     where: exp.Expression | None = None, computed_from: str = "",
                     as_of: date | None = None) -> Baseline:
    """The baseline of the rows in ``relation`` (those matching ``where``), measured in the engine.

    Development volume always; per month only when the rows have a month; event rate, AUC and
    KS only when they have an outcome. Month values are read and sorted as the monitor does
    (:func:`~scoremon.monitor.months.sort_months`, as of ``as_of``, default today): rows out of
    range are left out and counted. Raises :class:`InputError` when there are no rows, a month
    value is not a month, or the outcome holds values other than 0, 1 and NULL.
    """
    month_rows = month_sums(engine, spec, rows, relation, where, "measuring the development volume")
    with_month, rows_out_of_range = month_rows, None
    if rows.has_month:
        # the monitor's parser and rule (scoremon.monitor.months): rows out of range are left out
        sorted_months = sort_months(month_rows, rows.month_column or queries.MONTH, as_of or date.today())
        with_month = list(sorted_months.kept.values())
        rows_out_of_range = sorted_months.rows_out_of_range
        if sorted_months.rows_out_of_range or sorted_months.rows_later:
            where = _and(where, queries.months_in([r.value for r in with_month]))
    total = sum(r.rows for r in with_month)
    if total == 0:
        raise InputError(f"{computed_from or 'the development rows'}: no rows to compute a baseline from")
    invalid = sum(r.invalid_outcomes for r in with_month)
    if invalid:
        raise InputError(f"{computed_from}: the outcome holds {invalid:,} values that are neither 1, 0 nor NULL; "
                         "fix the outcome column")
    score_sum = sum(r.score_sum for r in with_month)
    points_sums = [sum(r.points_sums[i] for r in with_month) for i in range(len(spec.features))]
    unseen_sums = {name: sum(r.unseen_rows[name] for r in with_month) for name in rows.unseen_features}

    where = _and(where, _has_month(rows))
    edges = decile_edges(engine, relation, where, "finding the score deciles")
    counted = bin_counts(engine, spec, relation, edges, False, where, "counting development rows per score band and bin")
    counts = counted.get(None) or BinCounts([0] * (len(edges) + 1), [{} for _ in spec.features])
    lowers = [-math.inf] + edges
    uppers = edges + [math.inf]
    score_bands = [BaselineBand(lower=lo, upper=hi, share=n / total) for lo, hi, n in zip(lowers, uppers, counts.bands)]

    feature_shares = {}
    for i, feature in enumerate(spec.features):
        feature_shares[feature.name] = {b.label: counts.bins[i].get(b.label, 0) / total for b in feature_bins(spec, feature)}

    event_rate = auc = ks = None
    if rows.has_outcome:
        histogram = histogram_sums(engine, relation, where, False, "measuring development discrimination").get(None)
        if histogram is not None:
            known = histogram.events + histogram.non_events
            event_rate = histogram.events / known if known else None
            found = discrimination(histogram)
            if found is not None:
                auc, ks = found.auc, found.ks

    months = [r for r in with_month if r.rows > 0] if rows.has_month else []
    return Baseline(
        computed_from=computed_from,
        computed_at=datetime.now(timezone.utc).replace(microsecond=0).isoformat(),
        rows=total,
        rows_per_month=total / len(months) if months else None,
        rows_out_of_range=rows_out_of_range or None,
        event_rate=event_rate,
        auc=auc,
        ks=ks,
        mean_score=score_sum / total,
        score_bands=score_bands,
        feature_shares=feature_shares,
        mean_points={f.name: points_sums[i] / total for i, f in enumerate(spec.features)},
        unseen_rate={name: n / total for name, n in unseen_sums.items()},
    )


def _has_month(rows: MonitoredRows) -> exp.Expression | None:
    if not rows.has_month:
        return None
    return exp.Not(this=exp.Is(this=queries.column(queries.MONTH), expression=exp.Null()))


def _and(*conditions: exp.Expression | None) -> exp.Expression | None:
    present = [c.copy() for c in conditions if c is not None]
    if not present:
        return None
    return present[0] if len(present) == 1 else exp.and_(*present, copy=False)


# ---------------------------------------------------------------- writing it into a spec file

BASELINE_HEADER = """\
# Baseline: the development distribution this model was approved on, written by
# `scoremon baseline`; monitoring compares every month with it. Shares are fractions of the
# development rows. Score bands are the development score's deciles ([lower, upper)). The
# baseline is reference data, not part of the model: it does not change the fingerprint.
"""

TOP_LEVEL_KEY = re.compile(r"^[^\s#-][^:]*:")


def baseline_yaml(baseline: Baseline) -> str:
    """The ``baseline:`` section as YAML text (with a comment saying what it is)."""
    data = baseline.model_dump(mode="python", exclude_none=True)
    data["score_bands"] = [{"lower": b["lower"], "upper": b["upper"], "share": b["share"]} for b in data["score_bands"]]
    body = yaml.safe_dump({"baseline": data}, sort_keys=False, default_flow_style=None, allow_unicode=True, width=100)
    return BASELINE_HEADER + body


def spec_text_with_baseline(spec_text: str, baseline: Baseline) -> str:
    """``spec_text`` with its ``baseline:`` section replaced by (or, without one, followed by) ``baseline``.

    Every other line, comments included, is kept as written. A section is the top-level
    ``baseline:`` line and every line after it up to the next top-level key.
    """
    lines = spec_text.splitlines(keepends=True)
    start = next((i for i, line in enumerate(lines) if re.match(r"^baseline\s*:", line)), None)
    if start is None:
        kept = spec_text if spec_text.endswith("\n") or not spec_text else spec_text + "\n"
        return kept + "\n" + baseline_yaml(baseline)
    end = start + 1
    while end < len(lines) and not TOP_LEVEL_KEY.match(lines[end]):
        end += 1
    # comments and blank lines just before the next key belong to that key
    while end > start + 1 and (not lines[end - 1].strip() or lines[end - 1].startswith("#")) and end < len(lines):
        end -= 1
    # comment lines directly above the old section belonged to it (e.g. an earlier header)
    while start > 0 and lines[start - 1].startswith("#"):
        start -= 1
    before = "".join(lines[:start])
    after = "".join(lines[end:])
    section = baseline_yaml(baseline)
    if after:
        section += "\n"
    return before + section + after


def write_spec_with_baseline(spec_path: str | Path, baseline: Baseline, out_path: str | Path,
                             replace: bool = False) -> Path:
    """Write a copy of the spec at ``spec_path`` with ``baseline`` as its baseline section to ``out_path``.

    Every other line is kept as written. The file appears whole or not at all
    (:mod:`scoremon.files`). Raises :class:`InputError` when ``out_path`` is the spec itself
    (a spec is never overwritten in place), when its folder does not exist, or when it exists
    and ``replace`` is false.
    """
    spec_path, out_path = Path(spec_path), Path(out_path)
    if files.is_same_file(out_path, spec_path):
        raise InputError(f"--out {out_path} is the spec itself; a spec is never overwritten in place, "
                         "give a new file name (e.g. one with the version in it)")
    files.check_output(out_path, "--out", replace)
    original = spec_path.read_text(encoding="utf-8")
    text = spec_text_with_baseline(original, baseline)
    written = parse_spec(text, file=str(out_path))
    if fingerprint(written) != fingerprint(parse_spec(original, file=str(spec_path))):
        raise RuntimeError("writing the baseline changed the model's fingerprint")  # a bug, never an input error
    return files.write_text(out_path, text)
