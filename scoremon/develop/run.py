"""The `bin` and `fit` steps as the library and the command line call them: a table name in,
a report out (the face :mod:`scoremon.api` hands these on).

:func:`bin_development` and :func:`recount_binning` run :mod:`.binning` on a table;
:func:`fit_development` fits a binning file's characteristics (:mod:`.fitting`), measures the
baseline on the same table in the same run and writes the new spec (:mod:`.spec_writer`).
"""
from __future__ import annotations

import math
from datetime import datetime, timezone
from dataclasses import replace as replace_field
from pathlib import Path
from typing import Sequence

from ..engines import Engine, Progress
from ..errors import InputError
from ..monitor import measure_development
from ..sources import source_relation
from ..spec import fingerprint
from ..spec.model import Grade, Scaling, Spec
from .binning import BinReport, bin_table, recount_table
from .binning_file import Binning, Settings
from .fitting import fit_binning
from .records import FitReport, FitSettings
from .spec_writer import Naming, build_spec, grades_from_deciles, grades_from_pd, parse_grades, write_spec


def bin_development(engine: Engine, table: str, outcome: str, key: str | None = None, month_column: str | None = None,
                    features: Sequence[str] | None = None, exclude: Sequence[str] = (),
                    settings: Settings | None = None, progress: Progress | None = None,
                    categorical: Sequence[str] = ()) -> BinReport:
    """Fine and coarse classes of every characteristic of a development table (``scoremon bin``);
    see :mod:`scoremon.develop.binning`. Write the result with :func:`write_binning`."""
    return bin_table(engine, source_relation(table=table), table, outcome, key, month_column, features, exclude,
                     settings or Settings(), progress, categorical)


def recount_binning(engine: Engine, binning: Binning, table: str | None = None, outcome: str | None = None,
                    key: str | None = None, month_column: str | None = None,
                    progress: Progress | None = None) -> BinReport:
    """The bins of a (hand-edited) binning file counted again exactly as written (``scoremon bin
    --recount``); table, outcome, key and month default to the file's."""
    table = table or binning.table
    return recount_table(engine, source_relation(table=table), table, binning, outcome, key, month_column, progress)


def fit_spec(engine: Engine, binning: Binning, settings: FitSettings, naming: Naming, out: str | Path,
             table: str | None = None, outcome: str | None = None, month_column: str | None = None,
             replace: bool = False) -> tuple[Spec, FitReport]:
    """Fit a model on the characteristics of ``binning``: the new spec and its fit report, for
    ``out`` but not yet written (see :func:`fit_development`, which writes it).

    The fit (:mod:`scoremon.develop.fitting`), then the spec with the baseline measured on the
    same table in the same run, and the grades (by score deciles or PD bands) — see
    :mod:`scoremon.develop.spec_writer`. Raises :class:`InputError` before any work when ``out``
    exists and ``replace`` is not given.
    """
    run_at = datetime.now(timezone.utc).isoformat(timespec="seconds")
    out = Path(out)
    if out.exists() and not replace:
        raise InputError(f"--out {out} exists; give a new file name, or --replace to write over it")
    kind, values = parse_grades(settings.grades)
    table = table or binning.table
    source = source_relation(table=table)
    fitted = fit_binning(engine, source, table, binning, settings, outcome, month_column)
    scaling = Scaling(base_score=settings.base_score, base_odds=settings.base_odds, pdo=settings.pdo,
                      rounding=settings.rounding)
    whole_line = [Grade(name="all", lower=-math.inf, upper=math.inf)]
    grades = grades_from_pd(values, scaling) if kind == "pd" else whole_line
    baseline = measure_development(build_spec(fitted, naming, scaling, grades), engine, source,
                                   outcome or binning.outcome, month_column or binning.month_column, table)
    if kind == "quantiles":
        grades = grades_from_deciles(baseline, int(values[0]))
    spec = build_spec(fitted, naming, scaling, grades, baseline)
    return spec, replace_field(fitted.report, spec_file=str(out), spec_fingerprint=fingerprint(spec),
                               model_name=spec.model.name, model_version=spec.model.version, run_at=run_at)


def fit_development(engine: Engine, binning: Binning, settings: FitSettings, naming: Naming, out: str | Path,
                    table: str | None = None, outcome: str | None = None, month_column: str | None = None,
                    replace: bool = False) -> FitReport:
    """Fit a model on the characteristics of ``binning`` and write it as a new spec (``scoremon
    fit``): :func:`fit_spec`, then the spec written whole to ``out``."""
    spec, report = fit_spec(engine, binning, settings, naming, out, table, outcome, month_column, replace)
    written = write_spec(spec, out, replace, binning.file or "")
    return replace_field(report, spec_file=str(written))
