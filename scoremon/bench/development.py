"""Model development on the bench rows: the `bin` and `fit` steps as the commands run them.

Line (j) times both steps end to end in the bench's own process; line (k) runs each in a fresh
child process to measure its peak memory (:mod:`scoremon.bench.fit_memory`). Both go through
:mod:`scoremon.api`, the path ``scoremon bin`` and ``scoremon fit`` take:

    scoremon bin --table development --outcome defaulted --key application_id \\
        --features <the 15 characteristics> --out BINS.yaml
    scoremon fit BINS.yaml --penalty l2 --folds 5 --lambdas 20 --min-iv 0 --out SPEC.yaml

`bin` with its defaults; `fit` with the L2 penalty (the one whose optimum scikit-learn's
``LogisticRegression`` reaches exactly, which line (j) compares against), 5 folds and 20 λ (the
defaults), and ``--min-iv 0``: in the synthetic book several characteristics have an IV under
the default 0.02 and would leave, and the line is about a fit of all 15.
"""
from __future__ import annotations

from pathlib import Path

from sqlglot import exp

from .. import api
from ..develop.binning_file import Binning
from ..develop.records import FitReport, FitSettings
from ..engines import Engine, Progress
from ..trees import table_path
from . import workload

DEVELOPMENT = "development"  # the bench rows with an outcome (workload.development_rows)


def fit_settings() -> FitSettings:
    """`scoremon fit`'s settings in the bench (see the module docstring)."""
    return FitSettings(penalty="l2", alpha=0.0, folds=5, lambdas=20, key=workload.KEY, min_iv=0.0)


NAMING = api.Naming(name="bench_development", owner="scoremon benchmark", intended_use="speed measurement only",
                    event="synthetic")


def create_development(engine: Engine, source: str, progress: Progress | None = None) -> None:
    """The development table beside ``source`` (rows made by :func:`workload.generate_rows`)."""
    engine.write_table(workload.development_rows(workload.bench_spec(), source), [DEVELOPMENT],
                       "drawing an outcome for the bench rows", progress)


def drop_development(engine: Engine) -> None:
    engine.execute(exp.Drop(tables=[table_path([DEVELOPMENT])], kind="TABLE", exists=True),
                   "dropping the development table")


def bin_step(engine: Engine, binning_file: Path, progress: Progress | None = None) -> Binning:
    """``scoremon bin`` on the development table, written to ``binning_file`` (replaced)."""
    report = api.bin_development(engine, DEVELOPMENT, workload.OUTCOME, workload.KEY,
                                 features=workload.characteristic_columns(), progress=progress)
    api.write_binning(report.binning, binning_file, replace=True)
    return report.binning


def fit_step(engine: Engine, binning_file: Path, spec_file: Path) -> FitReport:
    """``scoremon fit`` of the binning file read back from ``binning_file``, the spec written to
    ``spec_file`` (replaced)."""
    return api.fit_development(engine, api.read_binning(binning_file), fit_settings(), NAMING, spec_file,
                               replace=True)
