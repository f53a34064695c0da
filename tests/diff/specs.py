"""Model versions for the diff tests: ``tests/diff/base.yaml`` with one piece changed.

Each variant is made by editing the base file's data and validating the result as a spec
file would be, so every variant is a spec a user could have written.
"""
from __future__ import annotations

import copy
from pathlib import Path
from typing import Callable

import yaml

from scoremon.spec import parse_spec
from scoremon.spec.model import Spec

HERE = Path(__file__).resolve().parent
BASE = HERE / "base.yaml"
REFORMATTED = HERE / "base_reformatted.yaml"


def base_data() -> dict:
    return yaml.safe_load(BASE.read_text(encoding="utf-8"))


def base() -> Spec:
    return parse_spec(BASE.read_text(encoding="utf-8"), str(BASE))


def variant(change: Callable[[dict], None]) -> Spec:
    """The base model with ``change`` applied to its data (in place)."""
    data = copy.deepcopy(base_data())
    change(data)
    return parse_spec(yaml.safe_dump(data, sort_keys=False), "<variant>")


def variant_text(change: Callable[[dict], None]) -> str:
    data = copy.deepcopy(base_data())
    change(data)
    return yaml.safe_dump(data, sort_keys=False)


def feature(data: dict, name: str) -> dict:
    return next(f for f in data["features"] if f["name"] == name)
