"""Line (e): peak memory of a scoring run, measured in a fresh child process.

The parent generates the rows into a DuckDB file; a new Python process (:mod:`.child`, started
on :func:`child_main`) opens that file read-only with a DuckDB ``memory_limit``, scores the table
to Parquet through :func:`scoremon.api.score` — the path ``scoremon score`` takes — and reports
its own peak resident set size, the rows scored and the seconds spent scoring.
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from .. import api
from .child import open_database, peak_rss_bytes, run_child, say
from .workload import bench_spec

TABLE = "input"


@dataclass(frozen=True)
class MemoryResult:
    """What the child reported: its peak RSS, rows scored and seconds spent scoring."""

    peak_bytes: int
    rows: int
    seconds: float


def measure_peak_memory(database: Path, out_file: Path, threads: int | None, memory_limit: str,
                        progress: Callable[[float], None] | None = None) -> MemoryResult:
    """Score ``database``'s input table to ``out_file`` in a child process; its peak memory."""
    final = run_child("scoremon.bench.memory:child_main", [str(database), str(out_file), str(threads or 0), memory_limit],
                      "scoring in the memory child process", progress)
    return MemoryResult(int(final["peak_bytes"]), int(final["rows"]), float(final["seconds"]))


def child_main(arguments: list[str]) -> None:
    """The child's entry point: database, output file, threads (0: DuckDB's default), memory limit."""
    database, out_file, threads, memory_limit = arguments
    engine = open_database(database, threads, memory_limit)
    try:
        result = api.score(bench_spec(), engine, api.source_relation(table=TABLE), out_file=out_file, replace=True,
                           progress=lambda share: say({"progress": share}))
    finally:
        engine.close()
    say({"peak_bytes": peak_rss_bytes(), "rows": result.rows, "seconds": result.seconds})
