"""Whole-model checks: the rules that span several keys of a spec.

The typed model (:mod:`scoremon.spec.model`) says what each key may hold; this module says
how keys must agree: bins cover the line, a category sits in one group, grades cover every
score, reasons name real features. :func:`check_spec` checks a validated spec;
:func:`check_parts` checks whatever parts of a spec passed validation on their own, so that a
type error in one feature does not hide a gap in another. Every problem is returned at once,
located at the key to edit.
"""
from __future__ import annotations

import difflib
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from decimal import Decimal, InvalidOperation

from ..errors import Problem
from .model import Baseline, CategoricalFeature, Feature, Grade, LinearFeature, NumericFeature, Reasons, Spec, Value
from .source import SpecSource, format_path

# PostgreSQL truncates identifiers at 63 bytes; the longest column we derive from a feature
# name is "<name>_points" (7 more), so names stop at 56 bytes.
MAX_NAME_BYTES = 56
VALUE_KINDS = ("woe", "log_odds", "points")

Report = Callable[[tuple, str], None]


def suggest(word: str, choices) -> str:
    """`; did you mean 'x'?` for the closest choice, or an empty string."""
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f"; did you mean {close[0]!r}?" if close else ""


def show_number(value: float) -> str:
    """A number as a spec writes it: ``25``, ``0.5``, ``.inf``, ``-.inf``."""
    if math.isnan(value):
        return ".nan"
    if value == math.inf:
        return ".inf"
    if value == -math.inf:
        return "-.inf"
    if float(value).is_integer() and abs(value) < 1e15:
        return str(int(value))
    return repr(float(value))


@dataclass(frozen=True)
class ValidParts:
    """The parts of a spec that passed shape validation, each checked against the rules.

    ``features`` maps a feature's position under ``features:`` to the validated feature.
    ``feature_names`` lists the name written for every feature, valid or not (``None`` where
    the name is not text), or is ``None`` itself when ``features:`` is not a list. A part that
    failed validation is absent, so none of its rules are checked: its shape problem is
    reported instead, and no message builds on values that were never accepted.
    """

    features: dict[int, Feature] = field(default_factory=dict)
    feature_names: tuple[str | None, ...] | None = None
    grades: tuple[Grade, ...] | None = None
    reasons: Reasons | None = None
    baseline: Baseline | None = None

    @classmethod
    def of(cls, spec: Spec) -> ValidParts:
        """Every part of a spec that validated whole."""
        return cls(dict(enumerate(spec.features)), tuple(f.name for f in spec.features), tuple(spec.grades),
                   spec.reasons, spec.baseline)


def check_spec(spec: Spec, source: SpecSource) -> list[Problem]:
    """Every whole-model problem of a validated ``spec``, located through ``source``."""
    return check_parts(ValidParts.of(spec), source)


def check_parts(parts: ValidParts, source: SpecSource) -> list[Problem]:
    """Every rule problem among the parts of a spec that passed validation."""
    problems: list[Problem] = []

    def report(path: tuple, message: str) -> None:
        problems.append(source.problem(path, message))

    if parts.feature_names is not None:
        _check_names(parts.feature_names, report)
    for position, feature in sorted(parts.features.items()):
        path = ("features", position)
        if feature.column is not None:
            trouble = _name_problem(feature.column)
            if trouble:
                report(path + ("column",), f"column name {feature.column!r} {trouble}")
        if isinstance(feature, NumericFeature):
            _check_numeric(feature, path, report)
            _check_edges_written(feature, path, source, report)
        elif isinstance(feature, CategoricalFeature):
            _check_categorical(feature, path, report)
        else:
            _check_linear(feature, path, report)
    if parts.grades is not None:
        _check_intervals([(g.lower, g.upper) for g in parts.grades], ("grades",), "grade", report)
        _check_unique([g.name for g in parts.grades], [("grades", i, "name") for i in range(len(parts.grades))],
                      "grade name", report)
    # Names of features that failed validation are still known; unknown only if some are not text.
    known = parts.feature_names if parts.feature_names and None not in parts.feature_names else None
    if parts.reasons is not None:
        _check_reasons(parts.reasons, known, report)
    if parts.baseline is not None:
        _check_baseline(parts.baseline, known, report)
    return problems


def _name_problem(name: str) -> str | None:
    if not name.strip():
        return "is empty; give a name"
    if name != name.strip():
        return "starts or ends with a space; remove it"
    if any(ord(ch) < 32 or ord(ch) == 127 for ch in name):
        return "contains a control character; use printable characters only"
    size = len(name.encode("utf-8"))
    if size > MAX_NAME_BYTES:
        return (f"is {size} bytes long, too long for a SQL column once '_points' is added (PostgreSQL keeps "
                f"63 bytes of a name); shorten it to at most {MAX_NAME_BYTES} bytes")
    return None


def _check_names(names: Sequence[str | None], report: Report) -> None:
    seen: dict[str, int] = {}
    for position, name in enumerate(names):
        if name is None:
            continue  # not text: reported as a shape problem
        path = ("features", position, "name")
        trouble = _name_problem(name)
        if trouble:
            report(path, f"feature name {name!r} {trouble}")
            continue
        folded = name.casefold()
        if folded in seen:
            report(path, f"feature name {name!r} is already used by features[{seen[folded]}] "
                         "(names are compared ignoring case, as SQL engines do); rename one")
        else:
            seen[folded] = position


def _value_kinds(value: Value) -> list[str]:
    return [kind for kind in VALUE_KINDS if getattr(value, kind) is not None]


def _check_value_kinds(feature, values: list[tuple[tuple, Value]], path: tuple, report: Report) -> None:
    """Each bin gives exactly one of woe / log_odds / points, the same kind across the feature."""
    kinds = []
    for sub_path, value in values:
        given = _value_kinds(value)
        if not given:
            report(path + sub_path, "gives no value; add one of woe, log_odds or points")
        elif len(given) > 1:
            report(path + sub_path, f"gives both {given[0]} and {given[1]}; keep exactly one")
        else:
            kinds.append((sub_path, given[0]))
    if not kinds:
        return
    first_path, first = kinds[0]
    for sub_path, kind in kinds[1:]:
        if kind != first:
            report(path + sub_path + (kind,), f"uses {kind} while {format_path(first_path)} uses {first}; "
                                              "give every bin of a feature the same kind of value")
    uses_woe = any(kind == "woe" for _, kind in kinds)
    if uses_woe and feature.coefficient is None:
        report(path, "bins give woe but the feature has no coefficient; add `coefficient:` "
                     "(the fitted coefficient that multiplies WoE)")
    if not uses_woe and feature.coefficient is not None:
        report(path + ("coefficient",), "coefficient is given but no bin uses woe; remove it, or give bins as woe")


def _check_intervals(edges: list[tuple[float, float]], path: tuple, noun: str, report: Report) -> None:
    """Intervals listed in ``edges`` must run from -inf to +inf with no gap and no overlap."""
    inverted = False
    for i, (lower, upper) in enumerate(edges):
        if not lower < upper:
            inverted = True
            report(path + (i, "upper"), f"upper edge {show_number(upper)} is not above lower edge "
                                        f"{show_number(lower)}; edges must increase")
    if inverted or not edges:
        return  # gaps and overlaps among reversed intervals would only mislead
    order = sorted(range(len(edges)), key=lambda i: edges[i])
    first, last = order[0], order[-1]
    name = path[-1]
    if edges[first][0] != -math.inf:
        report(path + (first, "lower"), f"the lowest {noun} starts at {show_number(edges[first][0])}, leaving lower "
                                        "values nowhere; set its lower edge to -.inf")
    if edges[last][1] != math.inf:
        report(path + (last, "upper"), f"the highest {noun} ends at {show_number(edges[last][1])}, leaving higher "
                                       "values nowhere; set its upper edge to .inf")
    for before, after in zip(order, order[1:]):
        end, start = edges[before][1], edges[after][0]
        if end < start:
            report(path + (after, "lower"), f"nothing covers {show_number(end)} to {show_number(start)}: "
                                            f"{name}[{before}] ends at {show_number(end)}; set this lower edge to "
                                            f"{show_number(end)}")
        elif end > start:
            report(path + (after, "lower"), f"overlaps {name}[{before}], which runs to {show_number(end)}; "
                                            f"set this lower edge to {show_number(end)}")


def _check_unique(labels: list[str], positions: list[tuple], noun: str, report: Report) -> None:
    """Report every repeat of a label at its own position, naming where it was first used."""
    first: dict[str, tuple] = {}
    for label, position in zip(labels, positions):
        if label in first:
            report(position, f"{noun} {label!r} is already used by {_owner(first[label])}; "
                             f"give each its own {noun}")
        else:
            first[label] = position


def _owner(position: tuple) -> str:
    """Where a label was first used, in short: ``bins[2]``, ``missing``, ``grades[0]``."""
    position = position[:-1]  # drop the key itself: label, name or code
    return format_path(position[-2:]) if isinstance(position[-1], int) else str(position[-1])


def _check_numeric(feature: NumericFeature, path: tuple, report: Report) -> None:
    values = [(("bins", i), b) for i, b in enumerate(feature.bins)] + [(("missing",), feature.missing)]
    _check_value_kinds(feature, values, path, report)
    _check_intervals([(b.lower, b.upper) for b in feature.bins], path + ("bins",), "bin", report)
    labels = [feature.bin_label(b) for b in feature.bins]
    labels.append(feature.missing.label)
    positions = [path + ("bins", i, "label") for i in range(len(feature.bins))] + [path + ("missing", "label")]
    _check_unique(labels, positions, "label", report)
    for key in ("nan", "positive_infinity", "negative_infinity"):
        target = getattr(feature, key)
        if target is not None and target not in labels:
            hint = suggest(target, labels) or f"; use one of {', '.join(repr(label) for label in labels)}"
            report(path + (key,), f"{key} goes to {target!r}, which is no bin of this feature{hint}")


def _check_edges_written(feature: NumericFeature, path: tuple, source: SpecSource, report: Report) -> None:
    """An edge must be written as the number its double stands for: whole-number and DECIMAL
    columns are compared with the edge as written (:mod:`scoremon.exact`), DOUBLE columns with
    the double, and the two must be the same number."""
    for i, b in enumerate(feature.bins):
        for key in ("lower", "upper"):
            written, edge = source.written(path + ("bins", i, key)), getattr(b, key)
            if written is None or not math.isfinite(edge):
                continue
            try:
                exact = Decimal(written.replace("_", ""))
            except InvalidOperation:
                continue  # a YAML spelling Decimal does not read (hexadecimal, sexagesimal)
            if exact != Decimal(repr(edge)):
                reads = str(int(edge)) if edge.is_integer() else repr(edge)
                report(path + ("bins", i, key), f"edge {written} has more digits than a double holds and reads as "
                                                f"{reads}; write {reads} (or an edge with at most 15 significant digits)")


def _check_categorical(feature: CategoricalFeature, path: tuple, report: Report) -> None:
    places = [(("groups", i), g) for i, g in enumerate(feature.groups)] + [(("other",), feature.other)]
    _check_value_kinds(feature, places + [(("missing",), feature.missing)], path, report)
    labels = [g.label for g in feature.groups] + [feature.other.label, feature.missing.label]
    positions = [path + ("groups", i, "label") for i in range(len(feature.groups))]
    positions += [path + ("other", "label"), path + ("missing", "label")]
    _check_unique(labels, positions, "label", report)
    owner: dict[object, str] = {}
    first_value: tuple[object, tuple] | None = None
    mixed_reported = False
    for sub_path, group in places:
        for j, value in enumerate(group.values):
            where = sub_path + ("values", j)
            if first_value is None:
                first_value = (value, where)
            elif isinstance(value, str) != isinstance(first_value[0], str) and not mixed_reported:
                mixed_reported = True  # one message per feature is enough to explain the fix
                report(path + where, f"category {value!r} is {_kind(value)} while {first_value[0]!r} "
                                     f"({format_path(first_value[1])}) is {_kind(first_value[0])}; write all of a "
                                     "feature's categories alike: quote numbers to make them text, or use only "
                                     "whole numbers to match an integer column")
            if value in owner:
                report(path + where, f"category {value!r} is already in group {owner[value]!r}; "
                                     "a category belongs to one group only")
            else:
                owner[value] = group.label


def _kind(value: object) -> str:
    return "text" if isinstance(value, str) else "a number"


def _check_linear(feature: LinearFeature, path: tuple, report: Report) -> None:
    if not feature.lower < feature.upper:
        report(path + ("upper",), f"upper clip {show_number(feature.upper)} is not above lower clip "
                                  f"{show_number(feature.lower)}; swap or widen them")
    if feature.scale == 0:
        report(path + ("scale",), "scale is 0 (it divides the value); use a non-zero scale, e.g. 1")
    given = _value_kinds(feature.missing)
    if "woe" in given:
        report(path + ("missing", "woe"), "a linear feature's missing bin cannot use woe (there are no bins for "
                                          "the coefficient to weigh); give log_odds or points")
    elif len(given) != 1:
        _check_value_kinds(feature, [(("missing",), feature.missing)], path, report)


def _check_reasons(reasons: Reasons, names: Sequence[str] | None, report: Report) -> None:
    statements = reasons.statements
    _check_unique([s.code for s in statements], [("reasons", "statements", i, "code") for i in range(len(statements))],
                  "reason code", report)
    owner: dict[str, str] = {}
    for i, statement in enumerate(statements):
        for j, name in enumerate(statement.features):
            path = ("reasons", "statements", i, "features", j)
            if names is not None and name not in names:
                report(path, f"no feature is named {name!r}{suggest(name, names)}")
            elif name in owner:
                report(path, f"feature {name!r} already gives reason {owner[name]!r}; "
                             "a feature belongs to one reason only")
            else:
                owner[name] = statement.code
    # Only a count the spec states can be wrong: the default asks for at most three.
    if "count" in reasons.model_fields_set and reasons.count > len(statements):
        report(("reasons", "count"), f"asks for {reasons.count} reasons but {len(statements)} statements are "
                                     f"declared; lower count to {len(statements)} or add statements")


def _check_baseline(baseline: Baseline, names: Sequence[str] | None, report: Report) -> None:
    if names is not None:
        for key in ("feature_shares", "mean_points", "unseen_rate"):
            for name in getattr(baseline, key):
                if name not in names:
                    report(("baseline", key, name), f"no feature is named {name!r}{suggest(name, names)}")
    if baseline.score_bands:
        _check_intervals([(b.lower, b.upper) for b in baseline.score_bands], ("baseline", "score_bands"),
                         "score band", report)
