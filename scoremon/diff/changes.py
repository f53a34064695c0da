"""The semantic comparison of two validated models → typed change records.

:func:`diff_models` compares identity, intercept and scaling, features (added, removed,
renamed, and each common feature through :mod:`scoremon.diff.features`), grades and reasons,
classifies every change by how it can affect a score, and works out what the changes do to
every score (:class:`~scoremon.diff.records.ScoreMap`): a constant shift, a common stretch,
or no single rule. Text is never compared: two files that load to the same model have the
same fingerprint and no change.
"""
from __future__ import annotations

import math

from ..spec.canonical import canonical_form, fingerprint
from ..spec.model import LinearFeature, Spec
from ..spec.model import interval_label
from ..spec.terms import base_points, feature_terms, linear_points, linear_points_slope, statement_reference
from .features import SCORE_OUTPUTS, FeatureComparison, compare_feature, differing_paths, written_in_points
from .records import Change, ChangeKind, Effect, ModelDiff, ScoreMap, VersionInfo
from .wording import number, same, signed, values_list

IDENTITY_FIELDS = ("name", "version", "description", "owner", "effective_date", "intended_use", "event",
                   "performance_window_months")


def diff_models(old: Spec, new: Spec, old_source: str = "", new_source: str = "") -> ModelDiff:
    """Compare two validated specs semantically.

    Returns a :class:`ModelDiff` whose ``changes`` is empty exactly when the two specs are the
    same model (equal fingerprints). ``old_source`` / ``new_source`` say where each spec came
    from (a file path) and are only carried into the record.

    >>> from scoremon.spec import load_spec
    >>> spec = load_spec("tests/fixtures/small.yaml")
    >>> diff_models(spec, spec).is_equivalent
    True
    """
    changes: list[Change] = []
    changes += _identity(old, new)
    changes += _scaling(old, new)
    feature_changes, comparisons, same_features = _features(old, new)
    changes += feature_changes
    changes += _grades(old, new)
    changes += _reasons(old, new)
    fp_old, fp_new = fingerprint(old), fingerprint(new)
    if fp_old != fp_new and not changes:
        # Every difference of the canonical form should be named above; this keeps the
        # promise "different fingerprints, at least one change" if one is not.
        paths = differing_paths(canonical_form(old), canonical_form(new))
        changes.append(Change(ChangeKind.OTHER, "model", f"the canonical forms differ at {', '.join(paths)}",
                              Effect.STRUCTURE, SCORE_OUTPUTS, None, None, paths))
    score_map = _score_map(old, new, comparisons) if same_features else None
    notes = []
    if old.baseline != new.baseline:
        notes.append("the development baselines differ; a baseline is reference data for monitoring, "
                     "not part of the model")
    notes += development_notes(old, new)
    return ModelDiff(
        VersionInfo(old.model.name, old.model.version, fp_old, old_source),
        VersionInfo(new.model.name, new.model.version, fp_new, new_source),
        tuple(changes), overall_effect(changes), score_map, tuple(notes),
    )


def overall_effect(changes) -> Effect:
    """The most severe effect; changes confined to single features but touching several of
    them make ``structure``."""
    top = max((c.effect for c in changes), key=lambda e: e.rank, default=Effect.NONE)
    touched = {c.feature for c in changes if c.effect is Effect.ONE_FEATURE}
    if top is Effect.ONE_FEATURE and len(touched) > 1:
        return Effect.STRUCTURE
    return top


def development_notes(old: Spec, new: Spec) -> list[str]:
    """One note per field of the development record that differs (the record is documentation:
    it does not change the fingerprint, so it is a note, not a change)."""
    if old.development == new.development:
        return []
    if old.development is None or new.development is None:
        which = "added" if old.development is None else "removed"
        return [f"development record {which}; it documents how the model was fitted and is not part of the model"]
    was, now = old.development.model_dump(mode="json"), new.development.model_dump(mode="json")
    notes = []
    for key in was:
        if key == "settings":
            for name in sorted(set(was[key]) | set(now[key])):
                if was[key].get(name) != now[key].get(name):
                    notes.append(f"development setting {name}: {now[key].get(name)!r} (was {was[key].get(name)!r})")
        elif was[key] != now[key]:
            notes.append(f"development {key.replace('_', ' ')}: {now[key]!r} (was {was[key]!r})")
    return notes


# ---------------------------------------------------------------- identity and scaling

def _identity(old: Spec, new: Spec) -> list[Change]:
    found = []
    for key in IDENTITY_FIELDS:
        was, now = getattr(old.model, key), getattr(new.model, key)
        if was != now:
            words = key.replace("_", " ")
            if key == "description":
                summary = "description reworded"
            elif key == "event":
                summary = f"event definition changed: {now!r} (was {was!r}); what the model predicts changed"
            else:
                summary = f"{words} {now} (was {was})"
            outputs = ("identity",) if key in ("name", "version") else ()
            found.append(Change(ChangeKind.IDENTITY_CHANGED, f"model.{key}", summary, Effect.NONE, outputs,
                                None, str(was), str(now)))
    return found


def _scaling(old: Spec, new: Spec) -> list[Change]:
    found = []
    if old.intercept != new.intercept:
        delta = new.intercept - old.intercept
        found.append(Change(
            ChangeKind.INTERCEPT_CHANGED, "intercept",
            f"intercept {number(old.intercept, 4)} → {number(new.intercept, 4)} ({signed(delta, 4)}): the odds of the "
            f"event of every row are multiplied by {number(math.exp(delta), 4)}, and every score moves by "
            f"{signed(-new.scaling.factor * delta)} points before rounding",
            Effect.SCALING_ONLY, ("score", "pd", "grade"), None, old.intercept, new.intercept, delta))
    for key, words in (("base_score", "base score"), ("base_odds", "base odds (good:bad)"),
                       ("pdo", "points to double the odds"), ("rounding", "rounding")):
        was, now = getattr(old.scaling, key), getattr(new.scaling, key)
        if was == now:
            continue
        delta = None if key == "rounding" else now - was
        outputs = ("score", "grade") if key in ("base_score", "base_odds") else ("score", "pd", "grade", "reasons")
        summary = f"{words} {number(was, 4)} → {number(now, 4)}" if delta is not None else f"{words} {now} (was {was})"
        effect = Effect.SCALING_ONLY
        if key == "pdo" and _mixes_units(old, new):
            # A bin given in points keeps its points and a bin given in WoE or log-odds keeps
            # its log-odds, so a new PDO stretches one kind against the other.
            effect = Effect.STRUCTURE
            summary += ("; features given in points keep their points while the others are rescaled, so their "
                        "relative weights change and rows can change order")
        found.append(Change(ChangeKind.SCALING_CHANGED, f"scaling.{key}", summary, effect, outputs,
                            None, was, now, delta))
    was, now = old.scaling.reported_pd, new.scaling.reported_pd
    if was != now:
        found.append(Change(ChangeKind.SCALING_CHANGED, "scaling.pd_from",
                            f"{new.scaling.reported_pd_words} (was {old.scaling.reported_pd_words.replace('PD ', '')})",
                            Effect.SCALING_ONLY, ("pd",), None, was, now, None))
    return found


def _mixes_units(old: Spec, new: Spec) -> bool:
    """True when the features both versions share include some given in points in both and
    some not."""
    by_new = {f.name: f for f in new.features}
    kinds = {written_in_points(f) and written_in_points(by_new[f.name]) for f in old.features if f.name in by_new}
    return len(kinds) == 2


# ---------------------------------------------------------------- features

def _points_range(spec: Spec, feature) -> tuple[float, float]:
    terms = feature_terms(spec, feature)
    values = [b.points for b in terms.bins]
    if isinstance(feature, LinearFeature):
        values += [linear_points(spec, feature, feature.lower), linear_points(spec, feature, feature.upper)]
    return min(values), max(values)


def _feature_data(spec: Spec, feature) -> dict:
    data = canonical_form(spec.model_copy(update={"features": [feature]}))["features"][0]
    return {k: v for k, v in data.items() if k not in ("name", "description")}


def _features(old: Spec, new: Spec) -> tuple[list[Change], list[tuple[object, object, FeatureComparison]], bool]:
    by_old = {f.name: f for f in old.features}
    by_new = {f.name: f for f in new.features}
    removed = [n for n in by_old if n not in by_new]
    added = [n for n in by_new if n not in by_old]
    found: list[Change] = []

    # a feature that kept everything but its name is a rename (only output columns change)
    renamed = []
    for was in list(removed):
        for now in added:
            if _feature_data(old, by_old[was]) == _feature_data(new, by_new[now]):
                renamed.append((was, now))
                removed.remove(was)
                added.remove(now)
                break
    for was, now in renamed:
        found.append(Change(ChangeKind.FEATURE_RENAMED, f"feature {now}",
                            f"feature {was!r} renamed {now!r}; its columns are now {now}_bin and {now}_points",
                            Effect.NONE, ("columns",), now, was, now))
    for name in removed:
        low, high = _points_range(old, by_old[name])
        found.append(Change(ChangeKind.FEATURE_REMOVED, f"feature {name}",
                            f"feature {name} removed (it gave between {number(low)} and {number(high)} points)",
                            Effect.STRUCTURE, SCORE_OUTPUTS + ("columns",), name, {"points": [low, high]}, None))
    for name in added:
        low, high = _points_range(new, by_new[name])
        column = by_new[name].source_column
        found.append(Change(ChangeKind.FEATURE_ADDED, f"feature {name}",
                            f"feature {name} added ({by_new[name].type}, column {column!r}, "
                            f"between {number(low)} and {number(high)} points)",
                            Effect.STRUCTURE, SCORE_OUTPUTS + ("columns",), name, None, {"points": [low, high]}))

    pairs = [(by_old[n], by_new[n]) for n in by_new if n in by_old]
    pairs += [(by_old[was], by_new[now]) for was, now in renamed]
    common_old = [f.name for f in old.features if f.name in by_new]
    common_new = [f.name for f in new.features if f.name in by_old]
    if common_old != common_new:
        found.append(Change(ChangeKind.FEATURE_ORDER_CHANGED, "features",
                            f"features listed in another order: {', '.join(common_new)} "
                            f"(was {', '.join(common_old)}); output columns follow this order",
                            Effect.NONE, ("columns",), None, common_old, common_new))
    comparisons = []
    for was, now in pairs:
        if was.name != now.name:  # compare a renamed feature under its new name
            was = was.model_copy(update={"name": now.name, "column": was.source_column})
        comparison = compare_feature(old, new, was, now)
        comparisons.append((was, now, comparison))
        found += comparison.changes
    same_features = not removed and not added and all(
        c.probes and not any(ch.kind in (ChangeKind.FEATURE_COLUMN_CHANGED, ChangeKind.FEATURE_TYPE_CHANGED)
                             for ch in c.changes) for _, _, c in comparisons)
    return found, comparisons, same_features


# ---------------------------------------------------------------- what happens to every score

def _score_map(old: Spec, new: Spec, comparisons) -> ScoreMap | None:
    """One rule for the move of every score, if there is one.

    A score is base points + Σ feature points. If every feature gives the same points for
    every input, every score moves by the change of the base points (a constant shift). If
    every feature's points are multiplied by one number b (a new PDO with values in WoE or
    log-odds), new score = (base_new − b·base_old) + b·old score.
    """
    base_old, base_new = base_points(old), base_points(new)
    probes = [p for _, _, c in comparisons for p in c.probes]
    pd_unchanged = same(old.intercept, new.intercept) and all(same(p.old.log_odds, p.new.log_odds) for p in probes)
    linear_same = all(
        not isinstance(now, LinearFeature)
        or (same(linear_points_slope(old, was), linear_points_slope(new, now))
            and (was.lower, was.upper, was.center) == (now.lower, now.upper, now.center))
        for was, now, _ in comparisons)
    rounding_old, rounding_new = old.scaling.rounding, new.scaling.rounding
    if all(same(p.old.points, p.new.points) for p in probes) and linear_same and rounding_old == rounding_new:
        shift = base_new - base_old
        # Rounding the total half away from zero commutes with adding a whole number as long
        # as no score changes sign; scores are far from zero in practice.
        is_exact = rounding_new != "total" or float(shift).is_integer()
        if same(shift, 0.0):
            return ScoreMap("identical", 0.0, 1.0, 0.0, True, pd_unchanged,
                            "no score moves" + ("" if pd_unchanged else "; PDs change"))
        summary = (f"every score moves by {signed(shift)} points (base points {number(base_old)} → "
                   f"{number(base_new)})" + ("" if is_exact else ", to within rounding")
                   + ("; PDs are unchanged" if pd_unchanged else "; PDs change (the odds move by a constant factor)"))
        return ScoreMap("constant_shift", shift, 1.0, shift, is_exact, pd_unchanged, summary)
    if rounding_old != "none" or rounding_new != "none":
        return None
    ratios = [p.new.points / p.old.points for p in probes if not same(p.old.points, 0.0)]
    if not ratios:
        return None
    slope = ratios[0]
    if not all(same(p.new.points, slope * p.old.points) for p in probes):
        return None
    intercept = base_new - slope * base_old
    summary = (f"scores are stretched: new score = {number(intercept)} + {number(slope, 4)} × old score "
               "(not a constant shift; rank order is kept)" + ("; PDs are unchanged" if pd_unchanged else ""))
    return ScoreMap("linear", None, slope, intercept, True, pd_unchanged, summary)


# ---------------------------------------------------------------- grades

def _grades(old: Spec, new: Spec) -> list[Change]:
    def band(g) -> str:
        return interval_label(g.lower, g.upper, "lower")

    old_g = {g.name: g for g in old.grades}
    new_g = {g.name: g for g in new.grades}
    found = []
    only_old = [n for n in old_g if n not in new_g]
    only_new = [n for n in new_g if n not in old_g]
    for was in list(only_old):
        for now in only_new:
            if (old_g[was].lower, old_g[was].upper) == (new_g[now].lower, new_g[now].upper):
                found.append(Change(ChangeKind.GRADE_RENAMED, f"grade {now}",
                                    f"grade {was!r} {band(new_g[now])} renamed {now!r}", Effect.NONE, ("grade",),
                                    None, was, now))
                only_old.remove(was)
                only_new.remove(now)
                break
    for name in sorted(set(old_g) & set(new_g), key=lambda n: -new_g[n].lower):
        g_old, g_new = old_g[name], new_g[name]
        if (g_old.lower, g_old.upper) != (g_new.lower, g_new.upper):
            found.append(Change(ChangeKind.GRADE_BOUNDS_CHANGED, f"grade {name}",
                                f"grade {name} covers {band(g_new)} (was {band(g_old)})", Effect.NONE, ("grade",),
                                None, [g_old.lower, g_old.upper], [g_new.lower, g_new.upper]))
    for name in only_old:
        found.append(Change(ChangeKind.GRADE_REMOVED, f"grade {name}", f"grade {name} {band(old_g[name])} removed",
                            Effect.NONE, ("grade",), None, [old_g[name].lower, old_g[name].upper], None))
    for name in only_new:
        found.append(Change(ChangeKind.GRADE_ADDED, f"grade {name}", f"grade {name} {band(new_g[name])} added",
                            Effect.NONE, ("grade",), None, None, [new_g[name].lower, new_g[name].upper]))
    return found


# ---------------------------------------------------------------- reasons

def _reference(spec: Spec, statement) -> float:
    return statement_reference(statement, {f.name: feature_terms(spec, f).max_points for f in spec.features})


def _reasons(old: Spec, new: Spec) -> list[Change]:
    found = []
    outputs = ("reasons",)
    if old.reasons.count != new.reasons.count:
        found.append(Change(ChangeKind.REASON_COUNT_CHANGED, "reasons.count",
                            f"{new.reasons.count} reasons per row (was {old.reasons.count})", Effect.NONE,
                            outputs + ("columns",), None, old.reasons.count, new.reasons.count))
    old_s = {s.code: s for s in old.reasons.statements}
    new_s = {s.code: s for s in new.reasons.statements}
    only_old = [c for c in old_s if c not in new_s]
    only_new = [c for c in new_s if c not in old_s]
    pairs = {c: c for c in old_s if c in new_s}
    for was in list(only_old):
        for now in only_new:
            if set(old_s[was].features) == set(new_s[now].features):
                pairs[was] = now
                found.append(Change(ChangeKind.REASON_CODE_RENAMED, f"reason {now}",
                                    f"reason code {was!r} is now {now!r} ({', '.join(new_s[now].features)})",
                                    Effect.NONE, outputs, None, was, now))
                only_old.remove(was)
                only_new.remove(now)
                break
    for was, now in pairs.items():
        s_old, s_new = old_s[was], new_s[now]
        if s_old.features != s_new.features:
            if set(s_old.features) == set(s_new.features):
                summary = f"reason {now} lists its features in another order ({', '.join(s_new.features)})"
            else:
                summary = (f"reason {now} now covers {', '.join(s_new.features)} "
                           f"(was {', '.join(s_old.features)})")
            found.append(Change(ChangeKind.REASON_FEATURES_CHANGED, f"reason {now}", summary, Effect.NONE, outputs,
                                None, list(s_old.features), list(s_new.features)))
        if s_old.text != s_new.text:
            found.append(Change(ChangeKind.REASON_TEXT_CHANGED, f"reason {now}",
                                f"reason {now} text: {s_new.text!r} (was {s_old.text!r})", Effect.NONE, (),
                                None, s_old.text, s_new.text))
        # A reference derived from the features' maximum points moves with those points; that
        # is a consequence of the feature changes reported above, so only a stated one is news.
        if s_old.reference != s_new.reference:
            ref_old, ref_new = _reference(old, s_old), _reference(new, s_new)
            how = "stated" if s_new.reference is not None else "now the sum of its features' maximum points"
            found.append(Change(ChangeKind.REASON_REFERENCE_CHANGED, f"reason {now}",
                                f"reason {now} reference {number(ref_old)} → {number(ref_new)} ({how})",
                                Effect.NONE, outputs, None, ref_old, ref_new, ref_new - ref_old))
    for code in only_old:
        found.append(Change(ChangeKind.REASON_REMOVED, f"reason {code}",
                            f"reason {code} ({', '.join(old_s[code].features)}) removed", Effect.NONE, outputs,
                            None, code, None))
    for code in only_new:
        found.append(Change(ChangeKind.REASON_ADDED, f"reason {code}",
                            f"reason {code} added: {new_s[code].text!r} for {', '.join(new_s[code].features)}",
                            Effect.NONE, outputs, None, None, code))
    order_old = [pairs[s.code] for s in old.reasons.statements if s.code in pairs]
    order_new = [s.code for s in new.reasons.statements if s.code in pairs.values()]
    if order_old != order_new:
        found.append(Change(ChangeKind.REASON_ORDER_CHANGED, "reasons.statements",
                            f"statements listed in another order ({values_list(order_new, 10)}); equal shortfalls "
                            "go to the statement listed first", Effect.NONE, outputs, None, order_old, order_new))
    return found
