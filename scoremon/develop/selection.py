"""Which characteristics enter the fit: explicit keep and drop lists, a minimum IV, a cap on
the pairwise correlation of WoE values.

The rules, in order:

1. a name in ``drop`` is left out; a name in ``keep`` goes in whatever the rules below say
   (names must be characteristics of the binning file: a typo is an error, with the closest
   name offered);
2. a characteristic whose WoE is the same on every development row is left out (it cannot
   move a score; an unpenalised fit could not estimate it) — keeping it is an error;
3. IV below ``min_iv`` (default 0.02, the usual "not predictive" line, common practice) is
   left out;
4. the rest are taken in order of IV, highest first (kept ones first of all); one whose WoE
   correlates with an already taken characteristic by more than ``max_correlation`` in
   absolute value (default 0.7, common practice) is left out, naming that characteristic.
"""
from __future__ import annotations

from dataclasses import dataclass
from difflib import get_close_matches
from typing import Sequence

import numpy as np

from ..errors import InputError
from .records import Left

MIN_IV = 0.02
MAX_CORRELATION = 0.7


@dataclass(frozen=True)
class Selection:
    """The characteristics chosen (in the binning file's order) and those left out, with why."""

    chosen: tuple[str, ...]
    left_out: tuple[Left, ...]
    warnings: tuple[str, ...] = ()


def check_names(names: Sequence[str], known: Sequence[str], option: str) -> None:
    for name in names:
        if name not in known:
            close = get_close_matches(name, known, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else f"; the binning file has {', '.join(known)}"
            raise InputError(f"{option} {name!r}: no such characteristic in the binning file{hint}")


def select(names: Sequence[str], ivs: Sequence[float], correlation: np.ndarray, constant: Sequence[bool],
           min_iv: float = MIN_IV, max_correlation: float = MAX_CORRELATION, keep: Sequence[str] = (),
           drop: Sequence[str] = ()) -> Selection:
    """Apply the rules of the module docstring. ``correlation`` is the WoE correlation matrix
    over ``names``; ``constant`` says which have one WoE value on every row."""
    check_names(keep, names, "--keep")
    check_names(drop, names, "--drop")
    both = sorted(set(keep) & set(drop))
    if both:
        raise InputError(f"{both[0]!r} is in both --keep and --drop; give it in one of them")
    if not 0.0 < max_correlation <= 1.0:
        raise InputError(f"--max-correlation {max_correlation}: give a number in (0, 1]")
    left_out: list[Left] = []
    warnings: list[str] = []
    candidates = []
    for i, name in enumerate(names):
        if name in drop:
            left_out.append(Left(name, "dropped by --drop"))
        elif constant[i]:
            if name in keep:
                raise InputError(f"--keep {name!r}: its WoE is the same on every development row, so it cannot be "
                                 "fitted; re-bin it so its bins differ, or leave it out")
            left_out.append(Left(name, "one WoE value on every development row (constant)"))
        elif ivs[i] < min_iv and name not in keep:
            left_out.append(Left(name, f"IV {ivs[i]:.4f} below the minimum {min_iv:g}"))
        else:
            candidates.append(i)
    candidates.sort(key=lambda i: (names[i] not in keep, -ivs[i], i))
    taken: list[int] = []
    for i in candidates:
        worst = max(taken, key=lambda t: abs(correlation[i, t]), default=None)
        if worst is not None and abs(correlation[i, worst]) > max_correlation:
            if names[i] in keep:
                warnings.append(f"{names[i]} kept by --keep although its WoE correlates {correlation[i, worst]:+.2f} "
                                f"with {names[worst]}")
            else:
                why = "kept by --keep" if names[worst] in keep else "higher IV"
                left_out.append(Left(names[i], f"WoE correlation {correlation[i, worst]:+.2f} with "
                                                   f"{names[worst]} ({why}) beyond {max_correlation:g}"))
                continue
        taken.append(i)
    if not taken:
        raise InputError("no characteristic is left to fit: lower --min-iv, raise --max-correlation or --keep one")
    order = {name: k for k, name in enumerate(names)}
    return Selection(tuple(sorted((names[i] for i in taken), key=order.get)),
                     tuple(sorted(left_out, key=lambda e: order[e.name])), tuple(warnings))


def variance_inflation(correlation: np.ndarray) -> np.ndarray:
    """VIF_j = [R⁻¹]_jj from the WoE correlation matrix R of the chosen characteristics
    (common practice; equal to 1 / (1 − R²_j) of regressing one on the others)."""
    if len(correlation) == 1:
        return np.ones(1)
    return np.diag(np.linalg.pinv(correlation))
