"""``scoremon bench``: how fast compiled scoring is, measured as ratios side by side in one run.

The facade of a small package: :mod:`.workload` (the synthetic spec and rows), :mod:`.queries`
(the baselines and aggregates), :mod:`.numpy_scorer` (the export route), :mod:`.timing`
(alternating rounds, median ratios), :mod:`.memory` (peak RSS in a child process) and
:mod:`.run` (the run itself). Only ratios measured in one run mean anything: absolute times on
a shared machine wander too much to compare across runs.
"""
from .run import BenchLine, BenchObserver, BenchReport, BenchSettings, Goal, run_bench

__all__ = ["BenchLine", "BenchObserver", "BenchReport", "BenchSettings", "Goal", "run_bench"]
