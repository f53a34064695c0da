"""Status thresholds: when a monitoring figure is ``ok``, ``watch`` or ``alert``.

The defaults are below and, with the reasons for each, in ``configs/thresholds.yaml`` (a test
keeps the two equal). ``--thresholds FILE`` overrides any of them: the file lists only the
keys to change, each with ``watch`` and/or ``alert``. Unknown keys, non-numbers and a watch
level past the alert level are input errors that name the file and the key.
"""
from __future__ import annotations

import dataclasses
import math
from difflib import get_close_matches
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml

from ..errors import InputError, cut
from ..spec import limits

OK, WATCH, ALERT = "ok", "watch", "alert"
STATUS_ORDER = {None: 0, OK: 1, WATCH: 2, ALERT: 3}


def worst(*statuses: str | None) -> str | None:
    """The most severe of ``statuses`` (``None`` counts as no status)."""
    return max(statuses, key=lambda s: STATUS_ORDER[s], default=None)


@dataclass(frozen=True)
class Limit:
    """A watch and an alert level; ``higher_is_worse`` says which way a figure gets worse."""

    watch: float
    alert: float
    higher_is_worse: bool = True

    def status(self, value: float | None) -> str | None:
        """``ok`` / ``watch`` / ``alert`` for ``value``; ``None`` when there is no value."""
        if value is None or (isinstance(value, float) and math.isnan(value)):
            return None
        if self.higher_is_worse:
            return ALERT if value >= self.alert else WATCH if value >= self.watch else OK
        return ALERT if value < self.alert else WATCH if value < self.watch else OK


@dataclass(frozen=True)
class Thresholds:
    """Every threshold the monitor applies (see ``configs/thresholds.yaml`` for the reasons).

    ``psi_confidence`` is not a figure's limit but the confidence levels of the sample-size-aware
    critical value: a PSI is ``watch`` only when it reaches ``score_psi.watch`` *and* exceeds
    the critical value at ``psi_confidence.watch``; ``alert`` likewise with the alert levels.
    """

    score_psi: Limit = Limit(0.10, 0.25)
    characteristic_psi: Limit = Limit(0.10, 0.25)
    psi_confidence: Limit = Limit(0.95, 0.99)
    volume_drop: Limit = Limit(0.25, 0.50)
    volume_rise: Limit = Limit(0.50, 1.00)
    missing_rate_change: Limit = Limit(0.05, 0.15)
    unseen_rate_change: Limit = Limit(0.01, 0.05)
    catch_all_share_change: Limit = Limit(0.05, 0.15)
    calibration_p_value: Limit = Limit(0.05, 0.001, higher_is_worse=False)
    auc_drop: Limit = Limit(0.03, 0.05)

    def as_dict(self) -> dict[str, dict[str, float]]:
        return {f.name: {"watch": getattr(self, f.name).watch, "alert": getattr(self, f.name).alert}
                for f in dataclasses.fields(self)}


DEFAULT_THRESHOLDS = Thresholds()
NAMES = tuple(f.name for f in dataclasses.fields(Thresholds))


def thresholds_from_data(data: Any, where: str) -> Thresholds:
    """Defaults overridden by ``data`` (a mapping as in ``configs/thresholds.yaml``).

    ``where`` names the source in error messages. Raises :class:`InputError` listing every problem.
    """
    if data is None:
        return DEFAULT_THRESHOLDS
    if not isinstance(data, dict):
        raise InputError(f"{where}: expected a mapping of threshold names (score_psi:, volume_drop:, ...)")
    problems: list[str] = []
    changes: dict[str, Limit] = {}
    for name, given in data.items():
        if name not in NAMES:
            close = get_close_matches(str(name), NAMES, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else f"; known names: {', '.join(NAMES)}"
            problems.append(f"{where}: {cut(str(name))}: unknown threshold{hint}")
            continue
        limit = getattr(DEFAULT_THRESHOLDS, name)
        if not isinstance(given, dict) or not given or set(given) - {"watch", "alert"}:
            problems.append(f"{where}: {name}: give a mapping with watch and/or alert, e.g. {{watch: {limit.watch}, "
                            f"alert: {limit.alert}}}")
            continue
        levels = {}
        for level in ("watch", "alert"):
            value = given.get(level, getattr(limit, level))
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
                problems.append(f"{where}: {name}.{level}: {cut(repr(value))} is not a number")
            else:
                levels[level] = float(value)
        if len(levels) < 2:
            continue
        candidate = Limit(levels["watch"], levels["alert"], limit.higher_is_worse)
        trouble = _order_problem(name, candidate)
        if trouble:
            problems.append(f"{where}: {name}: {trouble}")
        else:
            changes[name] = candidate
    if problems:
        raise InputError("the thresholds do not fit", problems)
    return dataclasses.replace(DEFAULT_THRESHOLDS, **changes)


def _order_problem(name: str, limit: Limit) -> str | None:
    if name in ("psi_confidence", "calibration_p_value") and not (0 < limit.watch < 1 and 0 < limit.alert < 1):
        return "levels are probabilities; give numbers between 0 and 1"
    if limit.watch < 0 or limit.alert < 0:
        return "levels cannot be negative"
    if name == "calibration_p_value":
        if limit.alert > limit.watch:
            return f"alert ({limit.alert}) must be at or below watch ({limit.watch}): a smaller p-value is worse"
    elif limit.alert < limit.watch:
        return f"alert ({limit.alert}) must be at or above watch ({limit.watch})"
    return None


def load_thresholds(path: str | Path | None) -> Thresholds:
    """The defaults, overridden by the YAML file at ``path`` when one is given."""
    if path is None:
        return DEFAULT_THRESHOLDS
    path = Path(path)
    try:
        limits.check_file_size(path)
        text = path.read_text(encoding="utf-8")
    except limits.LimitError as error:
        raise InputError(f"{path}:{error.line}:{error.column}: {error}") from None
    except FileNotFoundError:
        raise InputError(f"{path}: no such thresholds file; check the path") from None
    except OSError as error:
        raise InputError(f"{path}: cannot read the thresholds file ({error.strerror})") from None
    try:
        data = limits.load(text)
    except limits.LimitError as error:
        raise InputError(f"{path}:{error.line}:{error.column}: {error}") from None
    except yaml.YAMLError as error:
        mark = getattr(error, "problem_mark", None)
        where = f"{path}:{mark.line + 1}:{mark.column + 1}" if mark else str(path)
        raise InputError(f"{where}: not valid YAML ({getattr(error, 'problem', None) or error})") from None
    return thresholds_from_data(data, str(path))
