"""Line (k): peak memory of `scoremon fit` on many rows, measured in fresh child processes.

The parent has made the development table (:mod:`.development`) in a DuckDB file. Two children
(:mod:`.child`) then each open it read-only, as the commands do, with a DuckDB ``memory_limit``
and DuckDB's temporary directory in the bench folder, so that the fit's held table of bin
numbers (:mod:`scoremon.develop.streamed`) can spill to disk beyond the limit:

1. ``bin``: :func:`.development.bin_step` writes the binning file (its peak is reported beside
   the line, for information);
2. ``fit``: :func:`.development.fit_step` fits it as ``scoremon fit`` does — checks, WoE
   correlations, the held bin-number table read in batches into numpy for every Newton step of
   the 5-fold, 20-λ path, the unpenalised fit, Gini and KS, the baseline and the spec. Its peak
   is the line's value.

Each child reports ``{"peak_bytes", "seconds", "rows", "characteristics", "passes"}``. A step
that DuckDB stops with "Out of Memory" under the limit is run once more without one (DuckDB's
default, 80 % of the machine's memory), and the line says so: `bin` at 50M rows needs more than
1GB for its exact quantiles, and the fit is measured all the same.
"""
from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from sqlglot import exp

from ..errors import EngineError
from ..trees import text
from .child import open_database, peak_rss_bytes, run_child, say
from .development import bin_step, fit_step

BINNING_FILE, SPEC_FILE, SPILL_FOLDER = "fit-memory-binning.yaml", "fit-memory-spec.yaml", "fit-memory-spill"
ENTRY = "scoremon.bench.fit_memory:child_main"
OUT_OF_MEMORY = "Out of Memory"  # how DuckDB's error begins when an operator cannot stay under memory_limit


@dataclass(frozen=True)
class StepMemory:
    """What one child reported: its peak RSS, seconds spent, rows, characteristics, fit passes."""

    peak_bytes: int
    seconds: float
    rows: int
    characteristics: int
    passes: int = 0


    out_of_memory: str = ""  # DuckDB's error under the memory limit, when the step was run again without one


@dataclass(frozen=True)
class FitMemoryResult:
    """The peaks of the `bin` child and of the `fit` child."""

    binning: StepMemory
    fit: StepMemory


def measure_fit_memory(database: Path, folder: Path, threads: int | None, memory_limit: str,
                       progress: Callable[[float], None] | None = None) -> FitMemoryResult:
    """Bin, then fit, the development table of ``database`` in two child processes (files and
    DuckDB's spill in ``folder``, removed afterwards); their peak memory."""
    arguments = [str(database), str(folder), str(threads or 0)]
    try:
        binned = _step("bin", arguments, memory_limit, "binning in the fit-memory child process", progress)
        fitted = _step("fit", arguments, memory_limit, "fitting in the fit-memory child process")
    finally:
        for name in (BINNING_FILE, SPEC_FILE):
            (folder / name).unlink(missing_ok=True)
    return FitMemoryResult(binned, fitted)


def _step(step: str, arguments: list[str], memory_limit: str, purpose: str,
          progress: Callable[[float], None] | None = None) -> StepMemory:
    try:
        return StepMemory(**run_child(ENTRY, [step, *arguments, memory_limit], purpose, progress))
    except EngineError as error:
        if OUT_OF_MEMORY not in str(error):
            raise
        again = run_child(ENTRY, [step, *arguments, ""], f"{purpose}, without a memory limit", progress)
        return StepMemory(**again, out_of_memory=str(error))


def _spill_to(folder: Path) -> exp.Set:
    """``SET temp_directory = '<folder>'``: where DuckDB writes what exceeds its memory limit."""
    return exp.Set(expressions=[exp.SetItem(this=exp.EQ(this=exp.column("temp_directory"), expression=text(str(folder))))])


def child_main(arguments: list[str]) -> None:
    """The child's entry point: step (``bin`` or ``fit``), database, folder, threads (0: DuckDB's
    default), memory limit (empty: DuckDB's default)."""
    step, database, folder, threads, memory_limit = arguments
    folder = Path(folder)
    engine = open_database(database, threads, memory_limit)
    try:
        engine.execute(_spill_to(folder / SPILL_FOLDER), "setting DuckDB's temporary directory")
        started = time.perf_counter()
        if step == "bin":
            binning = bin_step(engine, folder / BINNING_FILE, progress=lambda share: say({"progress": share}))
            counts = {"rows": binning.rows, "characteristics": len(binning.features)}
        else:
            report = fit_step(engine, folder / BINNING_FILE, folder / SPEC_FILE)
            counts = {"rows": report.rows, "characteristics": len(report.characteristics), "passes": report.passes}
        seconds = time.perf_counter() - started
    finally:
        engine.close()
    say({"peak_bytes": peak_rss_bytes(), "seconds": seconds, **counts})
