"""``scoremon bench``: how fast compiled scoring is, measured as ratios side by side in one run.

The facade of a small package: :mod:`.workload` (the synthetic spec and rows, and the rows as a
development table), :mod:`.queries` (the baselines and aggregates), :mod:`.numpy_scorer` (the
export route of scoring), :mod:`.fitting` (one Newton step), :mod:`.development` (`bin` and `fit`
on the bench rows), :mod:`.export_fit` (the export route of fitting, to scikit-learn),
:mod:`.timing` (alternating rounds, median ratios), :mod:`.child` (work in a fresh process, its
peak RSS), :mod:`.memory` and :mod:`.fit_memory` (the peak memory of scoring and of fitting),
:mod:`.startup`, :mod:`.engines` (per-engine ratios) and :mod:`.run` (the run itself). Only ratios measured in one run mean anything: absolute times on
a shared machine wander too much to compare across runs.
"""
from .run import BenchLine, BenchObserver, BenchReport, BenchSettings, Goal, run_bench

__all__ = ["BenchLine", "BenchObserver", "BenchReport", "BenchSettings", "Goal", "run_bench"]
