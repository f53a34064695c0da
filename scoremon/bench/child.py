"""Work measured in a fresh child process: its own peak memory, reported over a pipe.

A fresh process is the only honest way to measure peak memory: the bench process has already
held the benchmark's data, and RSS never shrinks back in a report of the peak. The parent
starts a new Python on an entry point (``module:function``, given the argument list) with this
very package importable; the child speaks one JSON object per line on standard output:
``{"progress": share}`` while it works, then one final object of its own (which carries
``peak_bytes`` from :func:`peak_rss_bytes`). Lines (e) (scoring, :mod:`.memory`) and (k)
(fitting, :mod:`.fit_memory`) run their work this way.
"""
from __future__ import annotations

import json
import os
import resource
import subprocess
import sys
from pathlib import Path
from typing import Callable

from ..engines import DuckDBEngine
from ..errors import EngineError


def peak_rss_bytes() -> int:
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


def say(record: dict) -> None:
    """Send one record to the parent (the child's side of the pipe)."""
    print(json.dumps(record), flush=True)


def open_database(database: str, threads: str, memory_limit: str) -> DuckDBEngine:
    """The child's DuckDB engine: the database file read-only (as the commands open it), threads
    (``"0"``: DuckDB's default) and the DuckDB ``memory_limit`` under test (``""``: DuckDB's default)."""
    return DuckDBEngine(database, threads=int(threads) or None, memory_limit=memory_limit or None, read_only=True)


def run_child(entry: str, arguments: list[str], purpose: str,
              progress: Callable[[float], None] | None = None) -> dict:
    """Run ``entry`` (``"package.module:function"``, called with ``arguments``) in a fresh Python
    process; its final record. Raises :class:`EngineError` naming ``purpose`` when the child fails."""
    module, function = entry.split(":")
    # -c rather than -m: running the module as __main__ would import it twice (the package imports it)
    command = [sys.executable, "-c", f"import sys; from {module} import {function}; {function}(sys.argv[1:])",
               *arguments]
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
        raise EngineError(purpose, "duckdb", detail)
    return final
