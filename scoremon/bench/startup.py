"""Start-up: how long a fresh ``scoremon`` process takes, against a bare Python start.

Two lines, each timed side by side in turns (:mod:`.timing`) against ``python -c pass`` run by
the same interpreter: ``scoremon --help`` (arguments only), and ``scoremon check`` on the demo
spec (the spec's modules, parsing, validation and the fingerprint). The children run this very
copy of scoremon (its folder first on ``PYTHONPATH``), never an installed one.
"""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path
from typing import Callable, Sequence

from ..errors import InputError

ROOT = Path(__file__).resolve().parents[2]  # the folder holding this scoremon
DEMO_SPEC = ROOT / "demo_warehouse" / "spec_v1.yaml"


def python_run(arguments: Sequence[str]) -> Callable[[], None]:
    """Work that starts ``python ARGUMENTS`` with this scoremon importable and waits for it."""
    environment = dict(os.environ, PYTHONPATH=os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")])))
    command = [sys.executable, *arguments]

    def run() -> None:
        done = subprocess.run(command, env=environment, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        if done.returncode != 0:
            raise InputError(f"{' '.join(command[1:])} failed with exit code {done.returncode}: "
                             f"{done.stderr.strip().splitlines()[-1] if done.stderr.strip() else 'no message'}")

    return run


def bare_start() -> Callable[[], None]:
    return python_run(["-c", "pass"])


def help_start() -> Callable[[], None]:
    return python_run(["-m", "scoremon", "--help"])


def check_start() -> Callable[[], None]:
    return python_run(["-m", "scoremon", "check", str(DEMO_SPEC)])
