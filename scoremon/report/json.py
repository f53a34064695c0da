"""JSON renderings of result records, for pipelines and audit files.

:func:`to_plain` turns any result record (dataclasses, enums, dates, numpy values, tuples,
dicts) into plain JSON data; :func:`to_json` writes it as text. Keys keep the records' field
names, so a JSON key is the same word as the Python attribute. JSON has no NaN or infinity:
NaN becomes ``null`` and ±infinity the strings ``"inf"`` / ``"-inf"`` (an open bin edge).
"""
from __future__ import annotations

import dataclasses
import json
import math
from datetime import date, datetime
from enum import Enum
from typing import Any


def to_plain(value: Any) -> Any:
    """``value`` as plain data (dict, list, str, int, float, bool, None)."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: to_plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, Enum):
        return to_plain(value.value)
    if isinstance(value, dict):
        return {str(to_plain(k)): to_plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set, frozenset)):
        items = [to_plain(v) for v in value]
        return sorted(items, key=str) if isinstance(value, (set, frozenset)) else items
    if isinstance(value, (datetime, date)):
        return value.isoformat()
    if hasattr(value, "item") and callable(value.item) and getattr(value, "shape", None) == ():
        value = value.item()  # a numpy scalar
    if hasattr(value, "tolist") and callable(value.tolist):
        return to_plain(value.tolist())  # a numpy array
    if isinstance(value, float):
        if math.isnan(value):
            return None
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
    return value


def to_json(record: Any, indent: int | None = 2) -> str:
    """``record`` as JSON text (see :func:`to_plain` for how values are written)."""
    return json.dumps(to_plain(record), indent=indent, ensure_ascii=False, allow_nan=False)
