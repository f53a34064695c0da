"""One feature compared across two model versions, as functions of the input, not as text.

A feature maps each input value to a bin and a contribution. We evaluate both versions on
every input that can tell them apart — for a numeric feature each piece of the common
refinement of the two sets of edges (open intervals and the edges themselves, so a changed
closed side shows), for a categorical feature every listed category plus an unlisted one,
for a linear term its clip points — and on NULL, NaN and ±infinity. A difference in a
contribution is a change; anything else that differs (labels, how a value is written) is
reported with effect ``none``.

Values are compared in the unit the feature is written in: in points when both versions give
points, otherwise in log-odds. A new PDO therefore changes no feature written in WoE or
log-odds (it rescales every score, which :mod:`scoremon.diff.changes` reports once), and
none written in points.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from ..spec.canonical import canonical_form
from ..spec.model import CategoricalFeature, LinearFeature, NumericFeature, Spec, interval_label
from ..spec.terms import (
    BinTerm,
    FeatureTerms,
    feature_terms,
    linear_points,
    linear_slope,
    numeric_bins_in_order,
    special_routes,
)
from .records import Change, ChangeKind, Effect
from .wording import number, points_move, same, values_list

SCORE_OUTPUTS = ("score", "pd", "grade", "reasons")
SPECIAL_NAMES = {"nan": "NaN", "positive_infinity": "+inf", "negative_infinity": "-inf"}


@dataclass(frozen=True)
class Probe:
    """One input, or a range of inputs, evaluated under both versions."""

    where: str
    old: BinTerm
    new: BinTerm


@dataclass(frozen=True)
class FeatureComparison:
    """What :func:`compare_feature` found: the records, the probes behind them, and whether
    the feature's contribution changed for any input."""

    changes: tuple[Change, ...]
    probes: tuple[Probe, ...]
    is_changed: bool


def compare_feature(old_spec: Spec, new_spec: Spec, old, new) -> FeatureComparison:
    """Compare feature ``old`` of ``old_spec`` with feature ``new`` of ``new_spec`` (same name)."""
    name = new.name
    if old.type != new.type:
        change = Change(ChangeKind.FEATURE_TYPE_CHANGED, f"feature {name}",
                        f"{name} is now a {new.type} feature (was {old.type})", Effect.ONE_FEATURE,
                        SCORE_OUTPUTS + ("bin_labels",), name, old.type, new.type)
        return FeatureComparison((change,), (), True)
    in_points = written_in_points(old) and written_in_points(new)
    t_old, t_new = feature_terms(old_spec, old), feature_terms(new_spec, new)
    if isinstance(new, NumericFeature):
        found = _Numeric(old, new, t_old, t_new, in_points)
    elif isinstance(new, CategoricalFeature):
        found = _Categorical(old, new, t_old, t_new, in_points)
    else:
        found = _Linear(old_spec, new_spec, old, new, t_old, t_new)
    records = list(found.records)
    is_changed = found.is_changed
    effect = Effect.ONE_FEATURE if is_changed else Effect.NONE

    old_column, new_column = old.source_column, new.source_column
    if old_column != new_column:
        records.insert(0, Change(ChangeKind.FEATURE_COLUMN_CHANGED, f"feature {name}",
                                 f"{name} reads column {new_column!r} (was {old_column!r})", Effect.ONE_FEATURE,
                                 SCORE_OUTPUTS, name, old_column, new_column))
        is_changed = True
    old_coefficient, new_coefficient = getattr(old, "coefficient", None), getattr(new, "coefficient", None)
    if old_coefficient != new_coefficient and not isinstance(new, LinearFeature):
        records.insert(0, Change(
            ChangeKind.COEFFICIENT_CHANGED, f"feature {name}",
            f"{name} coefficient {number(old_coefficient, 4)} → {number(new_coefficient, 4)}"
            + ("" if found.is_changed else "; every bin keeps its contribution"),
            effect, SCORE_OUTPUTS if found.is_changed else (), name, old_coefficient, new_coefficient))
    kinds_old, kinds_new = _value_kinds(old), _value_kinds(new)
    if kinds_old != kinds_new:
        records.append(Change(ChangeKind.VALUES_RESTATED, f"feature {name}",
                              f"{name} bins are given as {'/'.join(kinds_new)} (were {'/'.join(kinds_old)})",
                              Effect.NONE, (), name, list(kinds_old), list(kinds_new)))
    if old.description != new.description:
        records.append(Change(ChangeKind.FEATURE_DESCRIPTION_CHANGED, f"feature {name}",
                              f"{name} description reworded", Effect.NONE, (), name, old.description, new.description))
    if not records:
        paths = differing_paths(_canonical_feature(old_spec, old), _canonical_feature(new_spec, new))
        if paths:
            records.append(Change(ChangeKind.VALUES_RESTATED, f"feature {name}",
                                  f"{name} restated ({', '.join(paths)}); every contribution is as before",
                                  Effect.NONE, (), name))
    return FeatureComparison(tuple(records), tuple(found.probes), is_changed)


def probe_changed(probe: Probe, in_points: bool) -> bool:
    if in_points:
        return not same(probe.old.points, probe.new.points)
    return not same(probe.old.log_odds, probe.new.log_odds)


def written_in_points(feature) -> bool:
    """True when every bin of the feature is given in points."""
    return not isinstance(feature, LinearFeature) and _value_kinds(feature) == ("points",)


def _value_kinds(feature) -> tuple[str, ...]:
    values = [feature.missing]
    if isinstance(feature, NumericFeature):
        values += feature.bins
    elif isinstance(feature, CategoricalFeature):
        values += list(feature.groups) + [feature.other]
    return tuple(sorted({v.value_kind for v in values if v.value_kind}))


def _canonical_feature(spec: Spec, feature) -> dict:
    data = canonical_form(spec.model_copy(update={"features": [feature]}))["features"][0]
    return {k: v for k, v in data.items() if k != "name"}


def differing_paths(old, new, path: str = "") -> list[str]:
    """Dotted paths at which two plain-data trees differ (lists compared item by item)."""
    if isinstance(old, dict) and isinstance(new, dict):
        found = []
        for key in sorted(set(old) | set(new), key=str):
            here = f"{path}.{key}" if path else str(key)
            if key not in old or key not in new:
                found.append(here)
            else:
                found += differing_paths(old[key], new[key], here)
        return found
    if isinstance(old, list) and isinstance(new, list) and len(old) == len(new):
        found = []
        for i, (a, b) in enumerate(zip(old, new)):
            found += differing_paths(a, b, f"{path}[{i}]")
        return found
    return [] if old == new else [path or "(whole)"]


# ---------------------------------------------------------------- numeric features

@dataclass(frozen=True)
class _Piece:
    lower: float
    upper: float
    closed_lower: bool
    closed_upper: bool
    at: float  # a value inside the piece

    def text(self) -> str:
        if self.lower == self.upper:
            return f"= {number(self.lower, 6)}"
        left = "[" if self.closed_lower else "("
        right = "]" if self.closed_upper else ")"
        return f"in {left}{number(self.lower, 6)}, {number(self.upper, 6)}{right}"


def _pieces(cuts: list[float]) -> list[_Piece]:
    """The line cut at ``cuts``: open intervals between cuts and each cut on its own."""
    if not cuts:
        return [_Piece(-math.inf, math.inf, False, False, 0.0)]
    pieces = [_Piece(-math.inf, cuts[0], False, False, cuts[0] - max(1.0, abs(cuts[0])))]
    for i, cut in enumerate(cuts):
        pieces.append(_Piece(cut, cut, True, True, cut))
        upper = cuts[i + 1] if i + 1 < len(cuts) else math.inf
        inside = (cut + upper) / 2 if upper != math.inf else cut + max(1.0, abs(cut))
        pieces.append(_Piece(cut, upper, False, False, inside))
    return pieces


def _bin_at(feature: NumericFeature, terms: FeatureTerms, x: float) -> BinTerm:
    for i, b in enumerate(numeric_bins_in_order(feature)):
        inside = (b.lower <= x < b.upper) if feature.closed == "lower" else (b.lower < x <= b.upper)
        if inside:
            return terms.bins[i]
    raise ValueError(f"{x} is in no bin of validated feature {feature.name}")  # a bug: bins cover the line


class _Numeric:
    def __init__(self, old: NumericFeature, new: NumericFeature, t_old: FeatureTerms, t_new: FeatureTerms,
                 in_points: bool):
        self.name = new.name
        self.records: list[Change] = []
        self.probes: list[Probe] = []
        old_bins, new_bins = numeric_bins_in_order(old), numeric_bins_in_order(new)
        old_cuts = [b.upper for b in old_bins[:-1]]
        new_cuts = [b.upper for b in new_bins[:-1]]

        # values over the line, merged into ranges that changed alike
        ranges: list[tuple[_Piece, _Piece, Probe]] = []
        for piece in _pieces(sorted(set(old_cuts) | set(new_cuts))):
            probe = Probe(piece.text(), _bin_at(old, t_old, piece.at), _bin_at(new, t_new, piece.at))
            self.probes.append(probe)
            if not probe_changed(probe, in_points):
                continue
            if ranges and ranges[-1][1].upper == piece.lower and _alike(ranges[-1][2], probe):
                first, _, kept = ranges[-1]
                ranges[-1] = (first, piece, kept)
            else:
                ranges.append((piece, piece, probe))
        value_records = []
        for first, last, probe in ranges:
            merged = _Piece(first.lower, last.upper, first.closed_lower, last.closed_upper, first.at)
            value_records.append(self._value_change(merged.text(), probe))

        # NULL, NaN and the infinities
        missing = Probe("missing (NULL)", t_old.bins[-1], t_new.bins[-1])
        self.probes.append(missing)
        if probe_changed(missing, in_points):
            value_records.append(self._value_change("missing (NULL)", missing))
        routes_old, routes_new = special_routes(old), special_routes(new)
        route_records = []
        for key, shown in SPECIAL_NAMES.items():
            probe = Probe(shown, t_old.bins[t_old.index(routes_old[key])], t_new.bins[t_new.index(routes_new[key])])
            self.probes.append(probe)
            where_old = _route_place(old, routes_old[key])
            where_new = _route_place(new, routes_new[key])
            if where_old != where_new:
                route_records.append((key, shown, where_old, where_new, probe))
        self.is_changed = bool(value_records) or any(probe_changed(r[-1], in_points) for r in route_records)
        effect = Effect.ONE_FEATURE if self.is_changed else Effect.NONE

        # the structure: edges, closed side, labels
        name = self.name
        removed = sorted(set(old_cuts) - set(new_cuts))
        added = sorted(set(new_cuts) - set(old_cuts))
        if removed and added and len(removed) == len(added):
            moves = ", ".join(f"{number(was, 6)} → {number(now, 6)}" for was, now in zip(removed, added))
            self._structure(ChangeKind.EDGES_MOVED,
                            f"{name} {'edge' if len(removed) == 1 else f'{len(removed)} edges'} moved: {moves}",
                            removed, added, effect)
        else:
            for bin_ in old_bins:
                cuts = [c for c in added if bin_.lower < c < bin_.upper]
                if cuts:
                    parts = [interval_label(lo, hi, new.closed)
                             for lo, hi in zip([bin_.lower] + cuts, cuts + [bin_.upper])]
                    self._structure(ChangeKind.BINS_SPLIT,
                                    f"{name} bin {interval_label(bin_.lower, bin_.upper, old.closed)} split at "
                                    f"{', '.join(number(c, 6) for c in cuts)} into {', '.join(parts)}",
                                    interval_label(bin_.lower, bin_.upper, old.closed), parts, effect)
            for bin_ in new_bins:
                cuts = [c for c in removed if bin_.lower < c < bin_.upper]
                if cuts:
                    parts = [interval_label(lo, hi, old.closed)
                             for lo, hi in zip([bin_.lower] + cuts, cuts + [bin_.upper])]
                    self._structure(ChangeKind.BINS_MERGED,
                                    f"{name} bins {', '.join(parts)} merged into "
                                    f"{interval_label(bin_.lower, bin_.upper, new.closed)}",
                                    parts, interval_label(bin_.lower, bin_.upper, new.closed), effect)
        if old.closed != new.closed:
            sides = {"lower": "[lower, upper)", "upper": "(lower, upper]"}
            self._structure(ChangeKind.CLOSED_SIDE_CHANGED,
                            f"{name} bins are {sides[new.closed]} (were {sides[old.closed]}): a value exactly on "
                            f"an edge now falls in the bin {'above' if new.closed == 'lower' else 'below'} it",
                            old.closed, new.closed, effect)
        for key, shown, where_old, where_new, probe in route_records:
            changed = probe_changed(probe, in_points)
            self.records.append(Change(
                ChangeKind.SPECIAL_ROUTE_CHANGED, f"feature {name}",
                f"{name} {shown} goes to the {where_new} (was the {where_old})"
                + (f": {points_move(probe.old.points, probe.new.points, probe.old.log_odds, probe.new.log_odds)}"
                   if changed else "; same contribution"),
                Effect.ONE_FEATURE if changed else Effect.NONE, SCORE_OUTPUTS + ("bin_labels",) if changed
                else ("bin_labels",), name, where_old, where_new,
                probe.new.points - probe.old.points if changed else None))
        self.records += value_records
        self._relabels(old, new, old_bins, new_bins)

    def _structure(self, kind, summary, old_value, new_value, effect) -> None:
        outputs = ("bin_labels",) + (SCORE_OUTPUTS if effect is not Effect.NONE else ())
        self.records.append(Change(kind, f"feature {self.name}", summary, effect, outputs, self.name,
                                   old_value, new_value))

    def _value_change(self, where: str, probe: Probe) -> Change:
        labels = (f"; bin {probe.old.label!r} → {probe.new.label!r}" if probe.old.label != probe.new.label
                  else f"; bin {probe.new.label!r}")
        return Change(ChangeKind.BIN_VALUE_CHANGED, f"feature {self.name}",
                      f"{self.name} {where}: "
                      f"{points_move(probe.old.points, probe.new.points, probe.old.log_odds, probe.new.log_odds)}"
                      f"{labels}", Effect.ONE_FEATURE, SCORE_OUTPUTS, self.name,
                      {"label": probe.old.label, "points": probe.old.points, "log_odds": probe.old.log_odds},
                      {"label": probe.new.label, "points": probe.new.points, "log_odds": probe.new.log_odds},
                      probe.new.points - probe.old.points)

    def _relabels(self, old, new, old_bins, new_bins) -> None:
        by_interval = {(b.lower, b.upper): b for b in old_bins}
        for b in new_bins:
            was = by_interval.get((b.lower, b.upper))
            if was is None or (was.label is None and b.label is None):
                continue
            old_label = old.bin_label(was)
            new_label = new.bin_label(b)
            if old_label != new_label:
                self.records.append(Change(ChangeKind.BIN_RELABELLED, f"feature {self.name}",
                                           f"{self.name} bin {old_label!r} is now labelled {new_label!r}",
                                           Effect.NONE, ("bin_labels",), self.name, old_label, new_label))
        if old.missing.label != new.missing.label:
            self.records.append(Change(ChangeKind.BIN_RELABELLED, f"feature {self.name}",
                                       f"{self.name} missing bin {old.missing.label!r} is now labelled "
                                       f"{new.missing.label!r}", Effect.NONE, ("bin_labels",), self.name,
                                       old.missing.label, new.missing.label))


def _alike(a: Probe, b: Probe) -> bool:
    return (same(a.old.points, b.old.points) and same(a.new.points, b.new.points)
            and same(a.old.log_odds, b.old.log_odds) and same(a.new.log_odds, b.new.log_odds))


def _route_place(feature: NumericFeature, label: str) -> str:
    """Where a special value goes, in words that survive re-binning: the missing bin, the
    bottom or top bin, or a named interval."""
    if label == feature.missing.label:
        return "missing bin"
    ordered = numeric_bins_in_order(feature)
    labels = [feature.bin_label(b) for b in ordered]
    i = labels.index(label)
    if i == 0:
        return "bottom bin"
    if i == len(ordered) - 1:
        return "top bin"
    return f"bin {interval_label(ordered[i].lower, ordered[i].upper, feature.closed)}"


# ---------------------------------------------------------------- categorical features

CATCH_ALL = object()  # the place of a value in the catch-all, whatever its label


class _Categorical:
    def __init__(self, old: CategoricalFeature, new: CategoricalFeature, t_old: FeatureTerms,
                 t_new: FeatureTerms, in_points: bool):
        name = self.name = new.name
        self.records: list[Change] = []
        self.probes: list[Probe] = []
        term_old = {b.label: b for b in t_old.bins[:-1]}
        term_new = {b.label: b for b in t_new.bins[:-1]}
        place_old, place_new = _places(old), _places(new)
        listed_old, listed_new = _listed(old), _listed(new)

        # which old group is which new group: same label, else the same set of values
        groups_old = {g.label: frozenset(g.values) for g in old.groups}
        groups_new = {g.label: frozenset(g.values) for g in new.groups}
        same_group = {label: label for label in groups_old if label in groups_new}
        renamed = []
        for label, values in groups_old.items():
            if label in same_group:
                continue
            for other_label, other_values in groups_new.items():
                if other_values == values and other_label not in same_group.values():
                    same_group[label] = other_label
                    renamed.append((label, other_label))
                    break

        def new_name_of(place):
            return CATCH_ALL if place is CATCH_ALL else same_group.get(place, ("gone", place))

        def label_of(feature, place):
            return feature.other.label if place is CATCH_ALL else place

        def shown(feature, place):
            return f"catch-all {feature.other.label!r}" if place is CATCH_ALL else f"group {place!r}"

        # categories that moved
        moves: dict[tuple, list] = {}
        for value in sorted(set(place_old) | set(place_new), key=lambda v: (isinstance(v, str), v)):
            was, now = place_old.get(value, CATCH_ALL), place_new.get(value, CATCH_ALL)
            probe = Probe(f"value {value!r}", term_old[label_of(old, was)], term_new[label_of(new, now)])
            self.probes.append(probe)
            if new_name_of(was) != now:
                moves.setdefault((was, now), []).append((value, probe))
            elif was is CATCH_ALL and (value in listed_old) != (value in listed_new):
                self.records.append(Change(
                    ChangeKind.CATCH_ALL_LISTING_CHANGED, f"feature {name}",
                    f"{name} value {value!r} is {'now' if value in listed_new else 'no longer'} listed in the "
                    f"catch-all; it goes there either way", Effect.NONE, (), name))
        unseen = Probe("unlisted values", term_old[old.other.label], term_new[new.other.label])
        missing = Probe("missing (NULL)", t_old.bins[-1], t_new.bins[-1])
        self.probes += [unseen, missing]
        self.is_changed = any(probe_changed(p, in_points) for p in self.probes)

        for (was, now), items in moves.items():
            values = [v for v, _ in items]
            probe = items[0][1]
            changed = probe_changed(probe, in_points)
            self.records.append(Change(
                ChangeKind.CATEGORY_MOVED, f"feature {name}",
                f"{name} {'value' if len(values) == 1 else 'values'} {values_list(values)} moved from "
                f"{shown(old, was)} to {shown(new, now)}"
                + (f": {points_move(probe.old.points, probe.new.points, probe.old.log_odds, probe.new.log_odds)}"
                   if changed else "; same contribution"),
                Effect.ONE_FEATURE if changed else Effect.NONE,
                ("bin_labels",) + (SCORE_OUTPUTS if changed else ()), name,
                {"group": label_of(old, was), "values": values}, {"group": label_of(new, now), "values": values},
                probe.new.points - probe.old.points if changed else None))
        effect = Effect.ONE_FEATURE if self.is_changed else Effect.NONE
        outputs = ("bin_labels",) + (SCORE_OUTPUTS if self.is_changed else ())
        for label in groups_new:
            if label not in same_group.values():
                self.records.append(Change(ChangeKind.GROUP_ADDED, f"feature {name}",
                                           f"{name} group {label!r} added with {values_list(sorted(groups_new[label], key=str))}",
                                           effect, outputs, name, None, label))
        for label in groups_old:
            if label not in same_group:
                self.records.append(Change(ChangeKind.GROUP_REMOVED, f"feature {name}",
                                           f"{name} group {label!r} removed", effect, outputs, name, label, None))
        for was, now in renamed:
            self.records.append(Change(ChangeKind.BIN_RELABELLED, f"feature {name}",
                                       f"{name} group {was!r} is now labelled {now!r}", Effect.NONE,
                                       ("bin_labels",), name, was, now))
        for kind, was_label, now_label in (("catch-all", old.other.label, new.other.label),
                                           ("missing bin", old.missing.label, new.missing.label)):
            if was_label != now_label:
                self.records.append(Change(ChangeKind.BIN_RELABELLED, f"feature {name}",
                                           f"{name} {kind} {was_label!r} is now labelled {now_label!r}", Effect.NONE,
                                           ("bin_labels",), name, was_label, now_label))

        # values of the groups that stayed, the catch-all and the missing bin
        kept = [(f"group {now!r}", Probe(f"group {now!r}", term_old[was], term_new[now]))
                for was, now in same_group.items()]
        kept += [(f"catch-all {new.other.label!r} (unlisted values)", unseen), ("missing (NULL)", missing)]
        for where, probe in kept:
            if probe_changed(probe, in_points):
                self.records.append(Change(
                    ChangeKind.BIN_VALUE_CHANGED, f"feature {name}",
                    f"{name} {where}: "
                    f"{points_move(probe.old.points, probe.new.points, probe.old.log_odds, probe.new.log_odds)}",
                    Effect.ONE_FEATURE, SCORE_OUTPUTS, name,
                    {"label": probe.old.label, "points": probe.old.points, "log_odds": probe.old.log_odds},
                    {"label": probe.new.label, "points": probe.new.points, "log_odds": probe.new.log_odds},
                    probe.new.points - probe.old.points))


def _places(feature: CategoricalFeature) -> dict:
    """Listed category → the label of its group, or CATCH_ALL."""
    places = {v: g.label for g in feature.groups for v in g.values}
    places.update({v: CATCH_ALL for v in feature.other.values})
    return places


def _listed(feature: CategoricalFeature) -> set:
    return set(feature.other.values)


# ---------------------------------------------------------------- linear features

class _Linear:
    PARTS = (("coefficient", ChangeKind.COEFFICIENT_CHANGED, "coefficient"),
             ("lower", ChangeKind.CLIP_CHANGED, "lower clip"),
             ("upper", ChangeKind.CLIP_CHANGED, "upper clip"),
             ("center", ChangeKind.LINEAR_TERM_CHANGED, "center"),
             ("scale", ChangeKind.LINEAR_TERM_CHANGED, "scale"))

    def __init__(self, old_spec: Spec, new_spec: Spec, old: LinearFeature, new: LinearFeature,
                 t_old: FeatureTerms, t_new: FeatureTerms):
        name = new.name
        self.records: list[Change] = []
        # The term is linear between the clip points and constant outside them, so the two
        # versions agree everywhere exactly when they agree at every clip point of either.
        self.probes = [
            Probe(f"= {number(x, 6)}",
                  _linear_term(old_spec, old, x), _linear_term(new_spec, new, x))
            for x in sorted({old.lower, old.upper, new.lower, new.upper})
        ]
        missing = Probe("missing (NULL, NaN)", t_old.bins[-1], t_new.bins[-1])
        self.probes.append(missing)
        self.is_changed = any(probe_changed(p, False) for p in self.probes)
        effect = Effect.ONE_FEATURE if self.is_changed else Effect.NONE
        outputs = SCORE_OUTPUTS if self.is_changed else ()
        moved = [p for p in self.probes[:-1] if probe_changed(p, False)]
        at_clips = "; ".join(f"points at x {p.where}: {number(p.old.points)} → {number(p.new.points)}" for p in moved)
        for key, kind, words in self.PARTS:
            was, now = getattr(old, key), getattr(new, key)
            if was != now:
                self.records.append(Change(
                    kind, f"feature {name}",
                    f"{name} {words} {number(was, 6)} → {number(now, 6)}"
                    + (f" ({at_clips})" if self.is_changed else "; the term is the same function of the input"),
                    effect, outputs, name, was, now, now - was))
        if probe_changed(missing, False):
            self.records.append(Change(
                ChangeKind.BIN_VALUE_CHANGED, f"feature {name}",
                f"{name} missing (NULL, NaN): "
                f"{points_move(missing.old.points, missing.new.points, missing.old.log_odds, missing.new.log_odds)}",
                Effect.ONE_FEATURE, SCORE_OUTPUTS, name,
                {"points": missing.old.points, "log_odds": missing.old.log_odds},
                {"points": missing.new.points, "log_odds": missing.new.log_odds},
                missing.new.points - missing.old.points))
        if old.missing.label != new.missing.label:
            self.records.append(Change(ChangeKind.BIN_RELABELLED, f"feature {name}",
                                       f"{name} missing bin {old.missing.label!r} is now labelled "
                                       f"{new.missing.label!r}", Effect.NONE, ("bin_labels",), name,
                                       old.missing.label, new.missing.label))


def _linear_term(spec: Spec, feature: LinearFeature, x: float) -> BinTerm:
    clipped = min(max(x, feature.lower), feature.upper)
    label = "clipped_low" if x < feature.lower else "clipped_high" if x > feature.upper else "in_range"
    return BinTerm(label, linear_slope(feature) * (clipped - feature.center), linear_points(spec, feature, clipped))
