"""A fitted model as a new spec file: identity, intercept, scaling, features with their
coefficients, grades, one reason statement per characteristic, the development record and
the baseline.

Grades, by ``--grades``:

* ``quantiles:N`` (2 ≤ N ≤ 10; default ``quantiles:10``): edges from the development score's
  deciles measured for the baseline, the decile edge nearest to each i/N (exact for N = 2, 5,
  10); tied deciles give fewer grades;
* ``pd:P1,P2,…`` (increasing PDs in (0, 1)): a grade per PD band, its score edges
  offset − factor·ln(P/(1 − P)).

Grades are named A, B, C, … from the highest score (lowest risk) down. The file is written
whole or not at all, is read back and must load to the same model, and never replaces an
existing file unless ``replace`` is given.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from datetime import date, datetime, timezone
from pathlib import Path
from typing import Sequence

import yaml

from ..errors import InputError
from ..files import write_text
from ..monitor.baseline import baseline_yaml
from ..spec import parse_spec
from ..spec.canonical import canonical_form
from ..spec.model import Baseline, Development, Grade, Identity, Reasons, ReasonStatement, Scaling, Spec
from .binning_file import scoremon_version
from .fitting import Fitted

GRADE_LETTERS = "ABCDEFGHIJKLMNOPQRSTUVWXYZ"
DECILES = 10


@dataclass(frozen=True)
class Naming:
    """The spec's identity, from the command line (defaults say where they came from)."""

    name: str
    version: str = "1"
    owner: str = "model development"
    intended_use: str = "application scoring; review before use"
    event: str = ""
    performance_window_months: int = 12
    effective_date: date | None = None


def parse_grades(text: str) -> tuple[str, tuple[float, ...]]:
    """``quantiles:N`` → ("quantiles", (N,)); ``pd:P1,P2,…`` → ("pd", (P1, P2, …))."""
    kind, _, rest = text.partition(":")
    try:
        if kind == "quantiles":
            count = int(rest or DECILES)
            if not 2 <= count <= DECILES:
                raise ValueError
            return kind, (float(count),)
        if kind == "pd":
            pds = tuple(float(v) for v in rest.split(","))
            if not pds or any(not 0.0 < v < 1.0 for v in pds) or list(pds) != sorted(set(pds)):
                raise ValueError
            return kind, pds
    except ValueError:
        pass
    raise InputError(f"--grades {text!r}: give quantiles:N (N from 2 to 10) or pd:P1,P2,… (increasing PDs "
                     "between 0 and 1), e.g. pd:0.01,0.02,0.05,0.1")


def grades_from_pd(pds: Sequence[float], scaling: Scaling) -> list[Grade]:
    """One grade per PD band; a higher PD is a lower score (see the module docstring)."""
    edges = [scaling.offset - scaling.factor * math.log(p / (1.0 - p)) for p in pds]  # decreasing
    return _named_grades(sorted(edges))


def grades_from_deciles(baseline: Baseline, count: int) -> list[Grade]:
    """``count`` grades from the baseline's score deciles (see the module docstring)."""
    edges = [b.lower for b in baseline.score_bands if math.isfinite(b.lower)]
    if len(edges) < DECILES - 1:  # tied deciles: take what there is
        return _named_grades(edges)
    chosen = sorted({edges[min(len(edges) - 1, max(0, round(DECILES * i / count) - 1))] for i in range(1, count)})
    return _named_grades(chosen)


def _named_grades(edges: Sequence[float]) -> list[Grade]:
    """Grades over ascending ``edges`` (n edges → n + 1 grades), A the highest scores."""
    bounds = [-math.inf] + list(edges) + [math.inf]
    count = len(bounds) - 1
    return [Grade(name=GRADE_LETTERS[count - 1 - i], lower=bounds[i], upper=bounds[i + 1]) for i in range(count)]


def reason_statements(features: Sequence) -> Reasons:
    """One statement per characteristic, in the spec's feature order; three reasons per row at most."""
    statements = [ReasonStatement(code=f"R{i:02d}", text=f"{f.description or f.name.replace('_', ' ')} lowered the score",
                                  features=[f.name]) for i, f in enumerate(features, start=1)]
    return Reasons(count=min(3, len(statements)), statements=statements)


def development_record(fitted: Fitted) -> Development:
    """The ``development`` section: where and how the model was fitted."""
    report = fitted.report
    settings = {key: (list(value) if isinstance(value, tuple) else value)
                for key, value in asdict(report.settings).items()}
    return Development(
        table=report.table, engine=report.engine, rows=report.rows, events=report.events,
        months=list(fitted.facts.months) if fitted.facts.months else None,
        binning_fingerprint=report.binning_fingerprint, settings=settings,
        chosen_lambda=report.chosen_lambda if report.settings.penalty != "none" else None,
        fitted_at=datetime.now(timezone.utc).replace(microsecond=0).isoformat(),
        scoremon_version=scoremon_version())


def build_spec(fitted: Fitted, naming: Naming, scaling: Scaling, grades: Sequence[Grade],
               baseline: Baseline | None = None) -> Spec:
    """The spec of a fitted model (validated by the spec model as it is built)."""
    identity = Identity(name=naming.name, version=naming.version, owner=naming.owner,
                        effective_date=naming.effective_date or date.today(), intended_use=naming.intended_use,
                        event=naming.event or f"{fitted.report.table}: outcome = 1",
                        performance_window_months=naming.performance_window_months)
    return Spec(model=identity, intercept=fitted.intercept, scaling=scaling, features=list(fitted.features),
                grades=list(grades), reasons=reason_statements(fitted.features), baseline=baseline,
                development=development_record(fitted))


HEADER = """\
# Written by `scoremon fit` from table {table} ({engine}); binning file {binning}.
# The coefficients multiply each bin's WoE; η = intercept + Σ coefficient × WoE is the log-odds
# of the event. Review the identity, grades and reason texts before approval.
"""


BIN_KEYS = ("label", "lower", "upper", "values")


def _ordered(data):
    """Bins and groups with their label, edges and values before their WoE (easier to read)."""
    if isinstance(data, dict):
        first = {k: _ordered(data[k]) for k in BIN_KEYS if k in data}
        return {**first, **{k: _ordered(v) for k, v in data.items() if k not in first}}
    if isinstance(data, list):
        return [_ordered(v) for v in data]
    return data


def _dump(data: dict, flow_leaves: bool) -> str:
    return yaml.safe_dump(data, sort_keys=False, default_flow_style=None if flow_leaves else False,
                          allow_unicode=True, width=110)


def spec_text(spec: Spec, binning_file: str = "") -> str:
    """The spec as YAML text: the model, then the development record, then the baseline."""
    data = spec.model_dump(mode="python", exclude_none=True, exclude={"baseline", "development"})
    if not data["model"].get("description"):
        data["model"].pop("description", None)
    features = [_ordered({k: v for k, v in f.items() if not (k == "description" and not v)})
                for f in data["features"]]
    development = spec.development
    text = HEADER.format(table=development.table if development else "?",
                         engine=development.engine if development else "?", binning=binning_file or "?")
    text += _dump({"model": data["model"]}, False)
    text += _dump({"intercept": data["intercept"]}, False)
    text += _dump({"scaling": data["scaling"]}, False) + "\n"
    text += "\n".join(_dump({"features": [f]}, True).replace("features:\n", "", 1) for f in features).join(
        ["features:\n", "\n"])
    text += _dump({"grades": data["grades"]}, True) + "\n"
    text += _dump({"reasons": data["reasons"]}, True)
    if development is not None:
        text += ("\n# How this model was fitted: documentation, not part of the model (no effect on the "
                 "fingerprint).\n" + _dump({"development": development.model_dump(mode="python", exclude_none=True)},
                                            True))
    if spec.baseline is not None:
        text += "\n" + baseline_yaml(spec.baseline)
    return text


def write_spec(spec: Spec, path: str | Path, replace: bool = False, binning_file: str = "") -> Path:
    """Write ``spec`` to ``path`` whole or not at all; refuse an existing file unless ``replace``.

    The text is read back first and must load to the same model (a bug otherwise)."""
    path = Path(path)
    if path.exists() and not replace:
        raise InputError(f"--out {path} exists; give a new file name, or --replace to write over it")
    if not path.parent.exists():
        raise InputError(f"{path}: folder {path.parent} does not exist; create it or choose another path")
    text = spec_text(spec, binning_file)
    again = parse_spec(text, file=str(path))
    if canonical_form(again) != canonical_form(spec) or again.development != spec.development:
        raise RuntimeError("the written spec does not load to the fitted model")  # a bug, never an input error
    return write_text(path, text)
