"""Coarse classes from fine classes: the partition into adjacent groups with the largest IV.

:func:`best_partition` cuts an ordered sequence of fine classes into runs of adjacent classes
(bins). Among the partitions where every bin holds at least ``min_rows`` rows and
``min_events`` events, with at most ``max_bins`` bins, and (when asked) WoE strictly
increasing or decreasing from bin to bin, it returns one with the largest IV. IV is a sum of
one term per bin, so the best partition is found exactly by dynamic programming over the end
of the last bin (an optimal segmentation, as in Bellman's dynamic programming): with a trend,
the state also holds where the last bin starts, so that the next bin's WoE can be compared
with it. With n fine classes and B bins that is O(B·n³) work for a trend and O(B·n²) without;
n is at most a few dozen. A test checks it against every partition of small inputs.

:func:`numeric_bins` and :func:`categorical_groups` turn fine classes into a spec feature's bins
with their counts: ±inf join the outer classes, NaN the missing bin (the spec's defaults); a
category under the minimum share goes to the catch-all ``other``, the rest are ordered by WoE
and grouped by the same dynamic programme (runs of that order give groups whose WoE is in
order too, so no trend is needed there).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

from ..spec.model import CategoricalFeature, CategoryGroup, MissingBin, NumericBin, NumericFeature, OtherGroup
from .binning_file import BinnedFeature, Settings, with_counts
from .fine import CategoricalClasses, NumericClasses
from .woe import bin_evidence

LABEL_LENGTH = 40
# Rare values are listed in the catch-all's values (so a modeller can move one to a group) up to
# this many; beyond that (a text column close to an identifier) the catch-all takes them unlisted.
RARE_LISTED = 50


@dataclass(frozen=True)
class Partition:
    """Bins as (start, end) fine-class ranges, end exclusive; their IV; the trend kept."""

    bins: tuple[tuple[int, int], ...]
    iv: float
    trend: str
    feasible: bool  # False: no partition met the constraints, so all classes form one bin


def best_partition(rows: Sequence[int], events: Sequence[int], total_rows: int, total_events: int,
                   min_rows: int, min_events: int, max_bins: int, trend: str) -> Partition:
    """The partition of the fine classes (``rows``/``events`` in order) with the largest IV.

    ``trend``: ``increasing`` or ``decreasing`` (WoE from the first bin to the last), ``auto``
    (whichever of the two gives the larger IV; increasing on a tie) or ``none``. IV terms are
    those of :func:`~scoremon.develop.woe.bin_evidence` (the whole sample's totals). When no
    partition meets the constraints (then not even one bin of everything does) the result is
    one bin with ``feasible`` False.

    >>> best_partition([50, 50], [5, 20], 100, 25, 10, 1, 5, "none").bins
    ((0, 1), (1, 2))
    """
    n = len(rows)
    if n == 0:
        raise ValueError("no fine classes")
    if trend == "auto":
        up = best_partition(rows, events, total_rows, total_events, min_rows, min_events, max_bins, "increasing")
        down = best_partition(rows, events, total_rows, total_events, min_rows, min_events, max_bins, "decreasing")
        return down if down.iv > up.iv else up
    row_sum, event_sum = [0], [0]
    for r, e in zip(rows, events, strict=True):
        row_sum.append(row_sum[-1] + r)
        event_sum.append(event_sum[-1] + e)

    woe: dict[tuple[int, int], float] = {}
    iv: dict[tuple[int, int], float] = {}
    for j in range(n):
        for i in range(j + 1, n + 1):
            r, e = row_sum[i] - row_sum[j], event_sum[i] - event_sum[j]
            if r >= min_rows and e >= min_events:
                evidence = bin_evidence(r, e, total_rows, total_events)
                woe[(j, i)], iv[(j, i)] = evidence.woe, evidence.iv
    if (0, n) not in iv:
        whole = bin_evidence(row_sum[n], event_sum[n], total_rows, total_events)
        return Partition(((0, n),), whole.iv, trend, False)
    bins = _monotone(n, woe, iv, max_bins, trend) if trend in ("increasing", "decreasing") else _free(n, iv, max_bins)
    return Partition(bins, math.fsum(iv[b] for b in bins), trend, True)


def _free(n: int, iv: dict, max_bins: int) -> tuple[tuple[int, int], ...]:
    """Largest IV without a trend: best[i] over partitions of classes [0, i) into b bins."""
    best: list[dict[int, tuple[float, tuple]]] = [{0: (0.0, ())}]
    answer = (iv[(0, n)], ((0, n),))
    for _ in range(max_bins):
        layer: dict[int, tuple[float, tuple]] = {}
        for j, (value, bins) in best[-1].items():
            for i in range(j + 1, n + 1):
                if (j, i) in iv:
                    candidate = value + iv[(j, i)]
                    if i not in layer or candidate > layer[i][0]:
                        layer[i] = (candidate, bins + ((j, i),))
        if n in layer and layer[n][0] > answer[0]:
            answer = layer[n]
        best.append(layer)
    return answer[1]


def _monotone(n: int, woe: dict, iv: dict, max_bins: int, trend: str) -> tuple[tuple[int, int], ...]:
    """Largest IV with WoE strictly in ``trend`` order: states are (start, end) of the last bin."""
    rising = trend == "increasing"
    layer: dict[tuple[int, int], tuple[float, tuple]] = {
        (0, i): (iv[(0, i)], ((0, i),)) for i in range(1, n + 1) if (0, i) in iv}
    answer = layer[(0, n)]
    for _ in range(max_bins - 1):
        following: dict[tuple[int, int], tuple[float, tuple]] = {}
        for (k, j), (value, bins) in layer.items():
            last = woe[(k, j)]
            for i in range(j + 1, n + 1):
                if (j, i) not in iv:
                    continue
                if not (woe[(j, i)] > last if rising else woe[(j, i)] < last):
                    continue
                candidate = value + iv[(j, i)]
                if (j, i) not in following or candidate > following[(j, i)][0]:
                    following[(j, i)] = (candidate, bins + ((j, i),))
        for (j, i), found in following.items():
            if i == n and found[0] > answer[0]:
                answer = found
        layer = following
        if not layer:
            break
    return answer[1]


# ---------------------------------------------------------------- fine classes → spec features

@dataclass(frozen=True)
class Coarse:
    """A characteristic's coarse classes and what a reviewer should hear about them."""

    binned: BinnedFeature | None  # None: left out (see notes)
    notes: tuple[str, ...]


def numeric_bins(fine: NumericClasses, total_rows: int, total_events: int, settings: Settings) -> Coarse:
    """Coarse bins ``(lower, upper]`` of a numeric characteristic, with counts, WoE and IV."""
    notes: list[str] = []
    rows, events = list(fine.rows), list(fine.events)
    if not rows:  # no finite value: one class for whatever infinities there are
        rows, events = [0], [0]
    rows[0] += fine.negative_infinity[0]
    events[0] += fine.negative_infinity[1]
    rows[-1] += fine.positive_infinity[0]
    events[-1] += fine.positive_infinity[1]
    missing = (fine.missing[0] + fine.nan[0], fine.missing[1] + fine.nan[1])
    if sum(rows) == 0:
        return Coarse(None, ("all missing in the sample: left out",))
    if fine.minimum is not None and fine.minimum == fine.maximum:
        notes.append(f"constant in the sample ({fine.minimum:g}): one bin")
    partition = best_partition(rows, events, total_rows, total_events, _min_rows(settings, total_rows),
                               settings.min_events, settings.max_bins, settings.trend)
    if not partition.feasible and len(rows) > 1:
        notes.append(_infeasible(settings, total_rows))
    edges = (-math.inf,) + fine.edges + (math.inf,)
    bins = [NumericBin(lower=edges[j], upper=edges[i], woe=0.0) for j, i in partition.bins]
    feature = NumericFeature(name=fine.name, type="numeric", closed="upper", bins=bins,
                             missing=MissingBin(woe=0.0))
    counts = [(sum(rows[j:i]), sum(events[j:i])) for j, i in partition.bins] + [missing]
    binned = with_counts(feature, counts, total_rows, total_events)
    if settings.trend == "auto" and len(bins) > 1:
        notes.append(f"WoE {partition.trend}")
    routed = [f"{count[0]:,} {what} {where}" for count, what, where in (
        (fine.nan, "NaN", "with missing"), (fine.positive_infinity, "+inf", "in the top bin"),
        (fine.negative_infinity, "-inf", "in the bottom bin")) if count[0]]
    if routed:
        notes.append(", ".join(routed))
    return Coarse(binned, tuple(notes))


def categorical_groups(fine: CategoricalClasses, total_rows: int, total_events: int, settings: Settings) -> Coarse:
    """Groups of a categorical characteristic: rare values to ``other``, the rest grouped in WoE order."""
    if not fine.values:
        return Coarse(None, ("all missing in the sample: left out",))
    notes: list[str] = []
    min_rows = _min_rows(settings, total_rows)
    common = [v for v in fine.values if v[1] >= min_rows]
    rare = [v for v in fine.values if v[1] < min_rows]
    if not common:
        notes.append("no value reaches the minimum share: all values form one group")
        common, rare = list(fine.values), []
    # order by WoE (value text breaks ties), so every run of the order is a group in WoE order
    common.sort(key=lambda v: (bin_evidence(v[1], v[2], total_rows, total_events).woe, v[0]))
    partition = best_partition([v[1] for v in common], [v[2] for v in common], total_rows, total_events, min_rows,
                               settings.min_events, settings.max_bins, "none")
    if not partition.feasible and len(common) > 1:
        notes.append(_infeasible(settings, total_rows))
    runs = [[v[0] for v in common[j:i]] for j, i in partition.bins]
    labels = _group_labels(runs)
    groups = [CategoryGroup(label=label, values=run, woe=0.0) for label, run in zip(labels, runs)]
    feature = CategoricalFeature(name=fine.name, type="categorical", groups=groups,
                                 other=OtherGroup(values=sorted(v[0] for v in rare) if len(rare) <= RARE_LISTED
                                                  else [], woe=0.0),
                                 missing=MissingBin(woe=0.0))
    counts = [(sum(v[1] for v in common[j:i]), sum(v[2] for v in common[j:i])) for j, i in partition.bins]
    counts += [(sum(v[1] for v in rare), sum(v[2] for v in rare)), fine.missing]
    if rare:
        listed = "" if len(rare) <= RARE_LISTED else " (not listed)"
        notes.append(f"{len(rare)} rare value{'s' if len(rare) != 1 else ''} in other{listed}")
    return Coarse(with_counts(feature, counts, total_rows, total_events), tuple(notes))


def _min_rows(settings: Settings, total_rows: int) -> int:
    return math.ceil(settings.min_share * total_rows - 1e-9)


def _infeasible(settings: Settings, total_rows: int) -> str:
    return (f"cannot split into bins of {settings.min_share:.0%} of rows ({_min_rows(settings, total_rows)}) and "
            f"{settings.min_events} events: one bin")


def _group_labels(runs: list[list[str | int]]) -> list[str]:
    """A label per group: its value, or its values joined with '/' (shortened), unique, never
    'other' or 'missing' (the catch-all's and the missing bin's)."""
    taken = {"other", "missing"}
    labels = []
    for run in runs:
        shown = [str(v) if not isinstance(v, str) else v if v.strip() else repr(v) for v in run]
        label = "/".join(shown)
        if len(label) > LABEL_LENGTH:
            label = f"{shown[0][:LABEL_LENGTH // 2]} and {len(run) - 1} more"
        candidate, number = label, 2
        while candidate in taken:
            candidate = f"{label} ({number})"
            number += 1
        taken.add(candidate)
        labels.append(candidate)
    return labels
