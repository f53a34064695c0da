"""Peak memory of a scoring run, measured in a fresh child process.

The parent generates the rows into a DuckDB file; a new Python process (started on
:func:`child_main`) opens that file with a DuckDB ``memory_limit``, scores the
table to Parquet through :func:`scoremon.api.score` — the path ``scoremon score`` takes — and
reports its own peak resident set size. A fresh process is the only honest way: the parent has
already held the benchmark's data, and RSS never shrinks back in a report of the peak.

The child speaks one JSON object per line on standard output: ``{"progress": share}`` while it
works, then ``{"peak_bytes": …, "rows": …, "seconds": …}``.
"""
from __future__ import annotations

import json
import os
import resource
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from .. import api
from ..engines import DuckDBEngine
from ..errors import EngineError
from .workload import bench_spec

TABLE = "input"


@dataclass(frozen=True)
class MemoryResult:
    """What the child reported: its peak RSS, rows scored and seconds spent scoring."""

    peak_bytes: int
    rows: int
    seconds: float


def _peak_rss_bytes() -> int:
    """This process's peak resident set size.

    On Linux VmHWM in /proc/self/status, the high-water mark of this program's own address
    space. Not ru_maxrss: Linux keeps it across execve, and a child forked from a parent holding
    gigabytes starts with the parent's pages resident, so ru_maxrss reported the parent's size
    (4.7 GiB in a 10M-row bench run where this process peaked at 1.3 GiB).
    """
    status = Path("/proc/self/status")
    if status.exists():
        for line in status.read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) * 1024  # the value is in kB
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak if sys.platform == "darwin" else peak * 1024  # kB on Linux, bytes on macOS


def _child(database: str, out_file: str, threads: int | None, memory_limit: str) -> None:
    def say(record: dict) -> None:
        print(json.dumps(record), flush=True)

    engine = DuckDBEngine(database, threads=threads, memory_limit=memory_limit)
    try:
        result = api.score(bench_spec(), engine, api.source_relation(table=TABLE), out_file=out_file, replace=True,
                           progress=lambda share: say({"progress": share}))
    finally:
        engine.close()
    say({"peak_bytes": _peak_rss_bytes(), "rows": result.rows, "seconds": result.seconds})


def measure_peak_memory(database: Path, out_file: Path, threads: int | None, memory_limit: str,
                        progress: Callable[[float], None] | None = None) -> MemoryResult:
    """Score ``database``'s input table to ``out_file`` in a child process; its peak memory."""
    # -c rather than -m: running this module as __main__ would import it twice (the package imports it)
    command = [sys.executable, "-c", "import sys; from scoremon.bench.memory import child_main; child_main(sys.argv[1:])",
               str(database), str(out_file), str(threads or 0), memory_limit]
    # the child must import this very package, installed or not
    package_root = str(Path(__file__).resolve().parents[2])
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(filter(None, [package_root, os.environ.get("PYTHONPATH")])))
    with subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env) as child:
        final = None
        for line in child.stdout:
            if not line.startswith("{"):
                continue  # not ours (a driver writing to standard output)
            record = json.loads(line)
            if "progress" in record:
                if progress:
                    progress(record["progress"])
            else:
                final = record
        errors = child.stderr.read()
        code = child.wait()
    if code != 0 or final is None:
        detail = errors.strip().splitlines()[-1] if errors.strip() else f"exit code {code}"
        raise EngineError("scoring in the memory child process", "duckdb", detail)
    return MemoryResult(int(final["peak_bytes"]), int(final["rows"]), float(final["seconds"]))


def child_main(arguments: list[str]) -> None:
    """The child's entry point: database, output file, threads (0: DuckDB's default), memory limit."""
    database, out_file, threads, memory_limit = arguments
    _child(database, out_file, int(threads) or None, memory_limit)
