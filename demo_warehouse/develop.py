"""Version 1 of the demo model, developed with scoremon's own ``bin`` and ``fit``.

The steps a model developer takes, each through the library face the commands call
(:func:`scoremon.api.bin_development`, :func:`~scoremon.api.recount_binning`,
:func:`~scoremon.api.fit_development`):

1. **Bin.** ``scoremon bin`` on the ``development`` table, every column: the bins it proposes
   (``development_bins.yaml``).
2. **Review.** A modeller edits that file by hand. The edit for version 1 was made once, on the
   default book, and is committed as ``demo_warehouse/bins_v1.yaml`` (its opening comments
   list the edits: edges rounded to two significant digits, housing's ``mortgage`` and
   ``owner`` merged, a short description per characteristic). ``scoremon bin --recount``
   counts its bins again, exactly as written, on the development table at hand.
3. **Fit.** ``scoremon fit`` on the recounted file, with the review's decisions as options
   (:data:`SETTINGS`, :data:`NAMING`): age and region left out by policy, open accounts left
   out as not significant, no penalty, 600 points at 50:1 odds and 20 points to double them,
   points rounded per bin, seven grades by PD band.

On the default book (:data:`demo_warehouse.generate.DEFAULT_ROWS` rows, the default seed) the
fit writes ``demo_warehouse/spec_v1.yaml`` again (:func:`differences`): every text and whole
number the same, every other number within :data:`SAME_NUMBER` of it, apart from when it ran
(the development record's ``fitted_at`` and the baseline's ``computed_at``) and scoremon's
version. The coefficients are written to the last bit, and their last digits depend on the
order of floating-point sums, which a different processor's BLAS kernels may change; hence the
tolerance. To write the file again, on purpose, and review the change as a diff::

    python -m demo_warehouse.develop --out demo_warehouse/spec_v1.yaml --replace

``spec_v2.yaml`` copies version 1's features that it does not revise: carry such changes over
into it too (``tests/diff/test_demo_versions.py`` names any feature where the two differ).
"""
from __future__ import annotations

import argparse
import math
import sys
import tempfile
from dataclasses import dataclass
from dataclasses import replace as replace_field
from datetime import date
from pathlib import Path

import yaml

from scoremon import api
from scoremon.errors import InputError, ScoremonError

from . import generate

REVIEWED_BINS = Path(__file__).with_name("bins_v1.yaml")
SPEC_V1 = Path(__file__).with_name("spec_v1.yaml")
PROPOSED_BINS_FILE = "development_bins.yaml"
REVIEWED_BINS_FILE = REVIEWED_BINS.name  # the fitted spec names it; it is written beside the spec
FITTED_SPEC_FILE = "spec_fitted.yaml"

# Left out of the model whatever the data say; binned all the same, so a fairness review can
# read their IV in the binning file.
LEFT_OUT_BY_POLICY = {
    "age": "protected under many fair-lending rules",
    "region": "can stand in for protected groups",
}
# The review's one statistical decision: open accounts' coefficient is not significant at 5 %
# when fitted with the others (Wald p ≈ 0.25, read in the report of a fit without this drop).
LEFT_OUT_BY_REVIEW = {"open_accounts": "not significant when fitted with the others"}

# Grades: seven PD bands, A the lowest risk: below 0.5 %, 0.5–1 %, 1–2 %, 2–4 %, 4–8 %, 8–16 %,
# 16 % and above. Each edge's PD doubles the one before, so the edges lie about one PDO (20
# points) apart.
SETTINGS = api.FitSettings(
    penalty="none", folds=5, key=generate.KEY_COLUMN,
    drop=tuple(sorted({*LEFT_OUT_BY_POLICY, *LEFT_OUT_BY_REVIEW})),
    base_score=600.0, base_odds=50.0, pdo=20.0, rounding="per_bin", grades="pd:0.005,0.01,0.02,0.04,0.08,0.16",
)
NAMING = api.Naming(
    name="quillfield_retail_pd",
    version="1",
    owner="Retail Credit Risk, Quillfield Credit (invented)",
    effective_date=date(2026, 6, 1),
    intended_use=("Decision support for unsecured and car loan applications at Quillfield Credit (personal, car, "
                  "home improvement, debt consolidation): an underwriter reviews every decline and every "
                  "application in grades F and G (PD 8% and above)."),
    event=("90 or more days past due on this loan at any time within 12 months of the application month "
           "(bad_12m = 1)."),
    performance_window_months=generate.PERFORMANCE_WINDOW_MONTHS,
)


@dataclass(frozen=True)
class Developed:
    """What the development step wrote and measured."""

    proposed: api.BinReport   # what `bin` proposed
    reviewed: api.BinReport   # the reviewed bins, recounted on this table
    fit: api.FitReport
    proposed_file: Path
    reviewed_file: Path
    spec_file: Path


def develop(database: str | Path, folder: str | Path, spec_file: str | Path | None = None,
            replace: bool = True) -> Developed:
    """Bin, recount the reviewed bins and fit on the development table of the book in ``database``.

    Writes :data:`PROPOSED_BINS_FILE` and :data:`REVIEWED_BINS_FILE` to ``folder`` and the spec to
    ``spec_file`` (default :data:`FITTED_SPEC_FILE` in ``folder``). Raises
    :class:`~scoremon.errors.ScoremonError` subclasses as the commands do (a file that exists
    without ``replace``, a table that does not fit the reviewed bins).
    """
    folder = Path(folder)
    spec_file = Path(spec_file) if spec_file is not None else folder / FITTED_SPEC_FILE
    engine = api.open_engine(str(database), read_only=True)  # every output is a file
    try:
        proposed = api.bin_development(engine, generate.DEVELOPMENT, generate.OUTCOME_COLUMN, key=generate.KEY_COLUMN,
                                       month_column=generate.MONTH_COLUMN)
        proposed_file = api.write_binning(proposed.binning, folder / PROPOSED_BINS_FILE, replace=replace)
        reviewed = api.recount_binning(engine, api.read_binning(REVIEWED_BINS, counted=False), generate.DEVELOPMENT)
        reviewed_file = api.write_binning(reviewed.binning, folder / REVIEWED_BINS_FILE, replace=replace)
        # the spec names its binning file by its name alone: it is written beside the spec
        binning = replace_field(reviewed.binning, file=REVIEWED_BINS_FILE)
        report = api.fit_development(engine, binning, SETTINGS, NAMING, spec_file, replace=replace)
    finally:
        engine.close()
    return Developed(proposed, reviewed, report, proposed_file, reviewed_file, Path(report.spec_file))


# Two runs of the fit on the same rows agree far closer than this (a sum in another order moves
# the last bit or two); a changed model moves its numbers far more.
SAME_NUMBER = 1e-9
# When a fit ran, and with which scoremon: not part of the model.
STAMPS = frozenset({"fitted_at", "scoremon_version", "computed_at"})


def differences(written: object, committed: object, where: str = "") -> list[str]:
    """Where two spec documents (as YAML loads them) differ as models: texts, whole numbers and
    the shape exactly, other numbers to :data:`SAME_NUMBER` relative, :data:`STAMPS` ignored."""
    if isinstance(written, dict) and isinstance(committed, dict):
        keys = (set(written) | set(committed)) - STAMPS
        return [d for key in sorted(keys, key=str)
                for d in differences(written.get(key), committed.get(key), f"{where}.{key}" if where else str(key))]
    if isinstance(written, list) and isinstance(committed, list):
        if len(written) != len(committed):
            return [f"{where}: {len(written)} items, committed {len(committed)}"]
        return [d for i, (a, b) in enumerate(zip(written, committed)) for d in differences(a, b, f"{where}[{i}]")]
    if isinstance(written, float) and isinstance(committed, float):
        if math.isclose(written, committed, rel_tol=SAME_NUMBER, abs_tol=SAME_NUMBER * 1e-3) or (
                math.isnan(written) and math.isnan(committed)):
            return []
    elif type(written) is type(committed) and written == committed:
        return []
    return [f"{where}: {written!r}, committed {committed!r}"]


def same_as_committed(spec_file: Path) -> list[str]:
    """Where the spec at ``spec_file`` differs from the committed version 1 (see :func:`differences`)."""
    return differences(yaml.safe_load(spec_file.read_text(encoding="utf-8")),
                       yaml.safe_load(SPEC_V1.read_text(encoding="utf-8")))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m demo_warehouse.develop",
                                     description="Build the default demo book in a temporary folder and develop "
                                                 "version 1 of the demo model on it with scoremon bin and fit.")
    parser.add_argument("--out", required=True, help=f"the spec to write (the committed one is {SPEC_V1})")
    parser.add_argument("--replace", action="store_true", help="replace --out if it exists")
    args = parser.parse_args(argv)
    out = Path(args.out)
    try:
        if out.exists() and not args.replace:
            raise InputError(f"--out {out} exists; give a new file name, or --replace to write over it")
        with tempfile.TemporaryDirectory(prefix="scoremon-develop-") as folder:
            book = generate.build_warehouse(Path(folder) / "book.duckdb")
            developed = develop(book.database, folder, out, replace=args.replace)
    except ScoremonError as error:
        print(f"error: {error}", file=sys.stderr)
        return 2
    print(f"wrote {developed.spec_file} (fingerprint {developed.fit.spec_fingerprint})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
