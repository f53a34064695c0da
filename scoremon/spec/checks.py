"""Whole-model checks: the rules that span several keys of a spec.

:func:`check_spec` returns every problem at once, each located at the key to edit. It runs
after the typed model (:mod:`scoremon.spec.model`) has accepted the file's shape.
"""
from __future__ import annotations

import difflib
import math
from collections import Counter

from ..errors import Problem
from .model import CategoricalFeature, LinearFeature, NumericFeature, Spec
from .source import SpecSource
from .terms import interval_label, numeric_bins_in_order

# PostgreSQL truncates identifiers at 63 bytes; the longest column we derive from a feature
# name is "<name>_points" (7 more), so names stop at 56 bytes.
MAX_NAME_BYTES = 56


def suggest(word: str, choices) -> str:
    """`; did you mean 'x'?` for the closest choice, or an empty string."""
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f"; did you mean {close[0]!r}?" if close else ""


def check_spec(spec: Spec, source: SpecSource) -> list[Problem]:
    """Every whole-model problem of ``spec``, located through ``source``."""
    problems: list[Problem] = []

    def report(path: tuple, message: str) -> None:
        problems.append(source.problem(path, message))

    _check_names(spec, report)
    for position, feature in enumerate(spec.features):
        path = ("features", position)
        if isinstance(feature, NumericFeature):
            _check_numeric(feature, path, report)
        elif isinstance(feature, CategoricalFeature):
            _check_categorical(feature, path, report)
        else:
            _check_linear(feature, path, report)
    _check_intervals(
        [(g.lower, g.upper) for g in spec.grades], ("grades",), "grade", "lower", report,
        order=sorted(range(len(spec.grades)), key=lambda i: spec.grades[i].lower),
    )
    _check_unique([g.name for g in spec.grades], ("grades",), "name", "grade name", report)
    _check_reasons(spec, report)
    _check_baseline(spec, report)
    return problems


def _name_problem(name: str) -> str | None:
    if not name.strip():
        return "is empty; give a name"
    if name != name.strip():
        return "starts or ends with a space; remove it"
    if any(ord(ch) < 32 for ch in name):
        return "contains a control character; use printable characters only"
    if len(name.encode("utf-8")) > MAX_NAME_BYTES:
        return f"is longer than {MAX_NAME_BYTES} bytes, too long for a SQL column name once suffixed; shorten it"
    return None


def _check_names(spec: Spec, report) -> None:
    seen: dict[str, int] = {}
    for position, feature in enumerate(spec.features):
        path = ("features", position, "name")
        trouble = _name_problem(feature.name)
        if trouble:
            report(path, f"feature name {feature.name!r} {trouble}")
            continue
        folded = feature.name.casefold()
        if folded in seen:
            report(path, f"feature name {feature.name!r} is already used by features[{seen[folded]}] "
                         "(names are compared ignoring case, as SQL engines do); rename one")
        else:
            seen[folded] = position
        if feature.column is not None:
            trouble = _name_problem(feature.column)
            if trouble:
                report(("features", position, "column"), f"column name {feature.column!r} {trouble}")


def _check_value_kinds(feature, values, path: tuple, report) -> None:
    """Each bin gives exactly one of woe / log_odds / points, the same kind across the feature."""
    kinds = []
    for sub_path, value in values:
        given = [k for k in ("woe", "log_odds", "points") if getattr(value, k) is not None]
        if len(given) == 0:
            report(path + sub_path, "gives no value; add one of woe, log_odds or points")
        elif len(given) > 1:
            report(path + sub_path, f"gives both {given[0]} and {given[1]}; keep exactly one")
        else:
            kinds.append((sub_path, given[0]))
    if not kinds:
        return
    first = kinds[0][1]
    for sub_path, kind in kinds[1:]:
        if kind != first:
            report(path + sub_path + (kind,), f"uses {kind} while the feature's other bins use {first}; "
                                              "use one kind of value within a feature")
    uses_woe = any(kind == "woe" for _, kind in kinds)
    coefficient = getattr(feature, "coefficient", None)
    if uses_woe and coefficient is None:
        report(path, "bins give woe but the feature has no coefficient; add `coefficient:` "
                     "(the fitted coefficient that multiplies WoE)")
    if not uses_woe and coefficient is not None and not isinstance(feature, LinearFeature):
        report(path + ("coefficient",), "coefficient is given but no bin uses woe; remove it, or give bins as woe")


def _check_intervals(edges, path: tuple, noun: str, edge_key: str, report, order) -> None:
    """Intervals listed in ``edges`` must run from -inf to +inf with no gap and no overlap."""
    for i, (lower, upper) in enumerate(edges):
        if not lower < upper:
            report(path + (i, "upper"), f"upper edge {upper:g} is not above lower edge {lower:g}; edges must increase")
    if not order:
        return
    first, last = order[0], order[-1]
    if edges[first][0] != -math.inf:
        report(path + (first, "lower"), f"the lowest {noun} starts at {edges[first][0]:g}, leaving lower values "
                                        "nowhere; set its lower edge to -.inf")
    if edges[last][1] != math.inf:
        report(path + (last, "upper"), f"the highest {noun} ends at {edges[last][1]:g}, leaving higher values "
                                       "nowhere; set its upper edge to .inf")
    for before, after in zip(order, order[1:]):
        end, start = edges[before][1], edges[after][0]
        if end < start:
            report(path + (after, "lower"), f"gap between {end:g} and {start:g} (after {path[-1]}[{before}]); "
                                            f"set this lower edge to {end:g}")
        elif end > start:
            report(path + (after, "lower"), f"overlaps {path[-1]}[{before}], which runs to {end:g}; "
                                            f"set this lower edge to {end:g}")


def _check_unique(labels, path: tuple, key: str, noun: str, report, positions=None) -> None:
    counts = Counter(labels)
    for i, label in enumerate(labels):
        if counts[label] > 1 and labels.index(label) != i:
            where = positions[i] if positions else (i, key)
            report(path + where, f"{noun} {label!r} is used twice; give each a distinct {noun}")


def _check_numeric(feature: NumericFeature, path: tuple, report) -> None:
    values = [((("bins", i)), b) for i, b in enumerate(feature.bins)] + [(("missing",), feature.missing)]
    _check_value_kinds(feature, values, path, report)
    order = sorted(range(len(feature.bins)), key=lambda i: feature.bins[i].lower)
    _check_intervals([(b.lower, b.upper) for b in feature.bins], path + ("bins",), "bin", "lower", report, order)
    labels = [b.label or interval_label(b.lower, b.upper, feature.closed) for b in feature.bins]
    positions = [(("bins", i, "label")) for i in range(len(labels))] + [("missing", "label")]
    _check_unique(labels + [feature.missing.label], path, "label", "label", report, positions)
    known = labels + [feature.missing.label]
    for key in ("nan", "positive_infinity", "negative_infinity"):
        target = getattr(feature, key)
        if target is not None and target not in known:
            report(path + (key,), f"{key} goes to {target!r}, which is no bin of this feature{suggest(target, known)}")


def _check_categorical(feature: CategoricalFeature, path: tuple, report) -> None:
    values = [(("groups", i), g) for i, g in enumerate(feature.groups)]
    values += [(("other",), feature.other), (("missing",), feature.missing)]
    _check_value_kinds(feature, values, path, report)
    labels = [g.label for g in feature.groups] + [feature.other.label, feature.missing.label]
    positions = [("groups", i, "label") for i in range(len(feature.groups))] + [("other", "label"), ("missing", "label")]
    _check_unique(labels, path, "label", "label", report, positions)
    owner: dict[object, str] = {}
    kinds: set[type] = set()
    places = [(("groups", i), g) for i, g in enumerate(feature.groups)] + [(("other",), feature.other)]
    for sub_path, group in places:
        for j, value in enumerate(group.values):
            kinds.add(type(value))
            if value in owner:
                report(path + sub_path + ("values", j), f"category {value!r} is already in group {owner[value]!r}; "
                                                        "a category belongs to one group only")
            else:
                owner[value] = group.label
    if len(kinds) > 1:
        report(path + ("groups",), "mixes text and number categories; quote the numbers so all are text, "
                                   "or make all whole numbers to match an integer column")


def _check_linear(feature: LinearFeature, path: tuple, report) -> None:
    if not feature.lower < feature.upper:
        report(path + ("upper",), f"upper clip {feature.upper:g} is not above lower clip {feature.lower:g}; swap or widen them")
    if feature.scale == 0:
        report(path + ("scale",), "scale is 0 (it divides the value); use a non-zero scale, e.g. 1")
    if feature.missing.woe is not None:
        report(path + ("missing", "woe"), "a linear feature's missing bin cannot use woe; give log_odds or points")
    elif feature.missing.value_kind is None:
        _check_value_kinds(feature, [(("missing",), feature.missing)], path, report)


def _check_reasons(spec: Spec, report) -> None:
    names = [f.name for f in spec.features]
    statements = spec.reasons.statements
    _check_unique([s.code for s in statements], ("reasons", "statements"), "code", "reason code", report)
    owner: dict[str, str] = {}
    for i, statement in enumerate(statements):
        for j, name in enumerate(statement.features):
            path = ("reasons", "statements", i, "features", j)
            if name not in names:
                report(path, f"no feature is named {name!r}{suggest(name, names)}")
            elif name in owner:
                report(path, f"feature {name!r} already gives reason {owner[name]!r}; a feature belongs to one reason only")
            else:
                owner[name] = statement.code
    if spec.reasons.count > len(statements):
        report(("reasons", "count"), f"asks for {spec.reasons.count} reasons but {len(statements)} statements are "
                                     f"declared; lower count to {len(statements)} or add statements")


def _check_baseline(spec: Spec, report) -> None:
    if spec.baseline is None:
        return
    by_name = {f.name: f for f in spec.features}
    for name, shares in spec.baseline.feature_shares.items():
        path = ("baseline", "feature_shares", name)
        if name not in by_name:
            report(path, f"no feature is named {name!r}{suggest(name, by_name)}")
    bands = spec.baseline.score_bands
    if bands:
        order = sorted(range(len(bands)), key=lambda i: bands[i].lower)
        _check_intervals([(b.lower, b.upper) for b in bands], ("baseline", "score_bands"), "score band", "lower", report, order)
