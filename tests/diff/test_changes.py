"""The structural comparison: every kind of change is found and classified, and a reformatted
or reordered copy of a spec is no change at all."""
from __future__ import annotations

import math

import pytest

from scoremon.diff import ChangeKind, Effect, diff_models
from scoremon.spec import fingerprint, load_spec

from .specs import REFORMATTED, base, feature, variant

# Scaling, CHECKS.md §1 (Siddiqi 2006, ch. 6, from memory): factor = PDO / ln 2 and
# score = offset − factor · η, so a bin's points are −factor · coefficient · WoE.
FACTOR = 20 / math.log(2)  # the base spec's PDO is 20


def kinds(diff) -> list[ChangeKind]:
    return [c.kind for c in diff.changes]


def only(diff, kind: ChangeKind):
    found = [c for c in diff.changes if c.kind is kind]
    assert len(found) == 1, (kind, [c.summary for c in diff.changes])
    return found[0]


# ---------------------------------------------------------------- no change

def test_reformatted_and_reordered_copy_is_no_change():
    old, new = base(), load_spec(REFORMATTED)
    diff = diff_models(old, new)
    assert diff.is_equivalent
    assert diff.changes == ()
    assert diff.effect is Effect.NONE
    assert diff.old.fingerprint == diff.new.fingerprint == fingerprint(old)


def test_baseline_alone_is_a_note_not_a_change():
    def add_baseline(d):
        d["baseline"] = {"rows": 1000, "computed_from": "development sample"}

    diff = diff_models(base(), variant(add_baseline))
    assert diff.is_equivalent
    assert any("baseline" in note for note in diff.notes)


# ---------------------------------------------------------------- every kind of change

def _set(path, value):
    """Set one value: ``("scaling", "pdo")`` or ``("features", "<feature name>", "<key>")``."""
    def change(d):
        target, keys = (feature(d, path[1]), path[2:]) if path[0] == "features" else (d, path)
        for key in keys[:-1]:
            target = target[key]
        target[keys[-1]] = value
    return change


def _age_bins(*bins):
    def change(d):
        feature(d, "age")["bins"] = [dict(zip(("lower", "upper", "woe"), b)) for b in bins]
    return change


INF = math.inf


def _many(*changes):
    def change(d):
        for c in changes:
            c(d)
    return change


def _drop_tenure(d):
    d["features"] = [f for f in d["features"] if f["name"] != "tenure"]
    d["reasons"]["statements"][2]["features"] = ["utilisation"]


# (id, change to the base, kinds that must be reported, overall class)
CASES = [
    ("version", _set(("model", "version"), "2"), [ChangeKind.IDENTITY_CHANGED], Effect.NONE),
    ("event", _set(("model", "event"), "60 days past due within 12 months"), [ChangeKind.IDENTITY_CHANGED], Effect.NONE),
    ("window", _set(("model", "performance_window_months"), 18), [ChangeKind.IDENTITY_CHANGED], Effect.NONE),
    ("owner", _set(("model", "owner"), "Risk Team"), [ChangeKind.IDENTITY_CHANGED], Effect.NONE),
    ("intercept", _set(("intercept",), -2.3), [ChangeKind.INTERCEPT_CHANGED], Effect.SCALING_ONLY),
    ("base score", _set(("scaling", "base_score"), 620), [ChangeKind.SCALING_CHANGED], Effect.SCALING_ONLY),
    ("base odds", _set(("scaling", "base_odds"), 100), [ChangeKind.SCALING_CHANGED], Effect.SCALING_ONLY),
    # the rounding, and with it the default PD source (from the rounded score now): two changes
    ("rounding", _set(("scaling", "rounding"), "per_bin"), [ChangeKind.SCALING_CHANGED] * 2, Effect.SCALING_ONLY),
    ("pd_from", _set(("scaling", "pd_from"), "score"), [ChangeKind.SCALING_CHANGED], Effect.SCALING_ONLY),
    ("pdo with points and woe features", _set(("scaling", "pdo"), 40), [ChangeKind.SCALING_CHANGED],
     Effect.STRUCTURE),
    ("feature removed", _drop_tenure, [ChangeKind.FEATURE_REMOVED, ChangeKind.REASON_FEATURES_CHANGED],
     Effect.STRUCTURE),
    ("feature added", lambda d: d["features"].append(
        {"name": "income", "type": "numeric", "coefficient": -0.5,
         "bins": [{"lower": -INF, "upper": 2000, "woe": -0.2}, {"lower": 2000, "upper": INF, "woe": 0.3}],
         "missing": {"woe": 0.0}}), [ChangeKind.FEATURE_ADDED], Effect.STRUCTURE),
    ("feature renamed", lambda d: (feature(d, "age").update(name="applicant_age", column="age"),
                                   d["reasons"]["statements"][0].update(features=["applicant_age"])),
     [ChangeKind.FEATURE_RENAMED, ChangeKind.REASON_FEATURES_CHANGED], Effect.NONE),
    ("feature order", lambda d: d["features"].insert(0, d["features"].pop(1)), [ChangeKind.FEATURE_ORDER_CHANGED],
     Effect.NONE),
    ("feature description", _set(("features", "age", "description"), "age at application in years"),
     [ChangeKind.FEATURE_DESCRIPTION_CHANGED], Effect.NONE),
    ("column", _set(("features", "region", "column"), "region_cd"), [ChangeKind.FEATURE_COLUMN_CHANGED],
     Effect.ONE_FEATURE),
    ("type", lambda d: d["features"].__setitem__(2, {
        "name": "utilisation", "type": "numeric",
        "bins": [{"lower": -INF, "upper": 0.5, "log_odds": -0.3}, {"lower": 0.5, "upper": INF, "log_odds": 0.6}],
        "missing": {"log_odds": 0.4}}), [ChangeKind.FEATURE_TYPE_CHANGED], Effect.ONE_FEATURE),
    ("split, same values", _age_bins((-INF, 25, -0.6), (25, 32, 0.1), (32, 40, 0.1), (40, 60, 0.4), (60, INF, 0.7)),
     [ChangeKind.BINS_SPLIT], Effect.NONE),
    ("split, new value", _age_bins((-INF, 25, -0.6), (25, 32, 0.1), (32, 40, 0.2), (40, 60, 0.4), (60, INF, 0.7)),
     [ChangeKind.BINS_SPLIT, ChangeKind.BIN_VALUE_CHANGED], Effect.ONE_FEATURE),
    ("merged", _many(_age_bins((-INF, 25, -0.6), (25, 40, 0.1), (40, INF, 0.4)),
                     _set(("features", "age", "nan"), "[40, inf)")),
     [ChangeKind.BINS_MERGED, ChangeKind.BIN_VALUE_CHANGED], Effect.ONE_FEATURE),
    ("edge moved", _age_bins((-INF, 25, -0.6), (25, 45, 0.1), (45, 60, 0.4), (60, INF, 0.7)),
     [ChangeKind.EDGES_MOVED, ChangeKind.BIN_VALUE_CHANGED], Effect.ONE_FEATURE),
    ("closed side", _many(_set(("features", "age", "closed"), "upper"), _set(("features", "age", "nan"), "(60, inf]")),
     [ChangeKind.CLOSED_SIDE_CHANGED] + [ChangeKind.BIN_VALUE_CHANGED] * 3, Effect.ONE_FEATURE),
    ("nan route", lambda d: feature(d, "age").pop("nan"), [ChangeKind.SPECIAL_ROUTE_CHANGED], Effect.ONE_FEATURE),
    ("+inf route", _set(("features", "age", "positive_infinity"), "[40, 60)"), [ChangeKind.SPECIAL_ROUTE_CHANGED],
     Effect.ONE_FEATURE),
    ("-inf route", _set(("features", "age", "negative_infinity"), "missing"), [ChangeKind.SPECIAL_ROUTE_CHANGED],
     Effect.ONE_FEATURE),
    ("woe", lambda d: feature(d, "age")["bins"][1].update(woe=0.2), [ChangeKind.BIN_VALUE_CHANGED],
     Effect.ONE_FEATURE),
    ("missing value", lambda d: feature(d, "age")["missing"].update(woe=-0.1), [ChangeKind.BIN_VALUE_CHANGED],
     Effect.ONE_FEATURE),
    ("coefficient", _set(("features", "age", "coefficient"), -1.0),
     [ChangeKind.COEFFICIENT_CHANGED] + [ChangeKind.BIN_VALUE_CHANGED] * 5, Effect.ONE_FEATURE),
    ("restated as log-odds", lambda d: feature(d, "age").update(
        coefficient=None, bins=[{"lower": b["lower"], "upper": b["upper"], "log_odds": -0.9 * b["woe"]} for b in feature(d, "age")["bins"]],
        missing={"log_odds": -0.9 * -0.3}), [ChangeKind.COEFFICIENT_CHANGED, ChangeKind.VALUES_RESTATED],
     Effect.NONE),
    ("category moved", lambda d: (feature(d, "region")["groups"][0].update(values=["N1"]),
                                  feature(d, "region")["groups"][1].update(values=["S1", "S2", "N2"])),
     [ChangeKind.CATEGORY_MOVED], Effect.ONE_FEATURE),
    ("group added", lambda d: feature(d, "region")["groups"].append({"label": "east", "values": ["E1"],
                                                                     "log_odds": -0.4}),
     [ChangeKind.CATEGORY_MOVED, ChangeKind.GROUP_ADDED], Effect.ONE_FEATURE),
    ("group removed", lambda d: feature(d, "region")["groups"].pop(1),
     [ChangeKind.CATEGORY_MOVED, ChangeKind.GROUP_REMOVED], Effect.ONE_FEATURE),
    ("catch-all value", lambda d: feature(d, "region")["other"].update(log_odds=0.15),
     [ChangeKind.BIN_VALUE_CHANGED], Effect.ONE_FEATURE),
    ("catch-all listing", lambda d: feature(d, "region")["other"].update(values=[]),
     [ChangeKind.CATCH_ALL_LISTING_CHANGED], Effect.NONE),
    ("out of the catch-all", lambda d: (feature(d, "region")["other"].update(values=[]),
                                        feature(d, "region")["groups"][0]["values"].append("Z9")),
     [ChangeKind.CATEGORY_MOVED], Effect.ONE_FEATURE),
    ("categorical missing", lambda d: feature(d, "region")["missing"].update(log_odds=0.1),
     [ChangeKind.BIN_VALUE_CHANGED], Effect.ONE_FEATURE),
    ("bin relabelled", lambda d: feature(d, "tenure")["bins"][1].update(label="mid"), [ChangeKind.BIN_RELABELLED],
     Effect.NONE),
    ("group relabelled", lambda d: feature(d, "region")["groups"][0].update(label="northern"),
     [ChangeKind.BIN_RELABELLED], Effect.NONE),
    ("points", lambda d: feature(d, "tenure")["bins"][2].update(points=15), [ChangeKind.BIN_VALUE_CHANGED],
     Effect.ONE_FEATURE),
    ("linear coefficient", _set(("features", "utilisation", "coefficient"), 1.5), [ChangeKind.COEFFICIENT_CHANGED],
     Effect.ONE_FEATURE),
    ("linear clip", _set(("features", "utilisation", "upper"), 1.2), [ChangeKind.CLIP_CHANGED], Effect.ONE_FEATURE),
    ("linear center", _set(("features", "utilisation", "center"), 0.4), [ChangeKind.LINEAR_TERM_CHANGED],
     Effect.ONE_FEATURE),
    ("linear restated", _many(_set(("features", "utilisation", "coefficient"), 2.4),
                              _set(("features", "utilisation", "scale"), 2.0)),
     [ChangeKind.COEFFICIENT_CHANGED, ChangeKind.LINEAR_TERM_CHANGED], Effect.NONE),
    ("linear missing", lambda d: feature(d, "utilisation")["missing"].update(log_odds=0.2),
     [ChangeKind.BIN_VALUE_CHANGED], Effect.ONE_FEATURE),
    ("grade bounds", lambda d: (d["grades"][1].update(lower=610), d["grades"][2].update(upper=610)),
     [ChangeKind.GRADE_BOUNDS_CHANGED] * 2, Effect.NONE),
    ("grade renamed", lambda d: d["grades"][3].update(name="E"), [ChangeKind.GRADE_RENAMED], Effect.NONE),
    ("grade added", lambda d: (d["grades"][0].update(upper=680), d["grades"].insert(0, {"name": "A+", "lower": 680,
                                                                                        "upper": INF})),
     [ChangeKind.GRADE_BOUNDS_CHANGED, ChangeKind.GRADE_ADDED], Effect.NONE),
    ("reason count", _set(("reasons", "count"), 3), [ChangeKind.REASON_COUNT_CHANGED], Effect.NONE),
    ("reason added", lambda d: (d["reasons"]["statements"][2].update(features=["utilisation"]),
                                d["reasons"]["statements"].append({"code": "R4", "text": "Short tenure",
                                                                   "features": ["tenure"]})),
     [ChangeKind.REASON_FEATURES_CHANGED, ChangeKind.REASON_ADDED], Effect.NONE),
    ("reason removed", lambda d: d["reasons"]["statements"].pop(1), [ChangeKind.REASON_REMOVED], Effect.NONE),
    ("reason code renamed", lambda d: d["reasons"]["statements"][1].update(code="R20"),
     [ChangeKind.REASON_CODE_RENAMED], Effect.NONE),
    ("reason text", lambda d: d["reasons"]["statements"][1].update(text="Region of residence"),
     [ChangeKind.REASON_TEXT_CHANGED], Effect.NONE),
    ("reason reference", lambda d: d["reasons"]["statements"][2].update(reference=30),
     [ChangeKind.REASON_REFERENCE_CHANGED], Effect.NONE),
    ("reason mapping", lambda d: (d["reasons"]["statements"][1].update(features=["region", "tenure"]),
                                  d["reasons"]["statements"][2].update(features=["utilisation"])),
     [ChangeKind.REASON_FEATURES_CHANGED] * 2, Effect.NONE),
    ("reason order", lambda d: d["reasons"]["statements"].insert(0, d["reasons"]["statements"].pop(1)),
     [ChangeKind.REASON_ORDER_CHANGED], Effect.NONE),
]


@pytest.mark.parametrize("change, expected, effect", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_every_kind_of_change_is_found(change, expected, effect):
    old, new = base(), variant(change)
    diff = diff_models(old, new)
    assert sorted(kinds(diff), key=lambda k: k.value) == sorted(expected, key=lambda k: k.value), \
        [c.summary for c in diff.changes]
    assert diff.effect is effect
    assert not diff.is_equivalent
    assert fingerprint(old) != fingerprint(new)
    for record in diff.changes:
        assert record.summary and record.subject


def test_the_reverse_change_is_found_too():
    for _, change, expected, _ in CASES:
        diff = diff_models(variant(change), base())
        assert diff.changes, expected


# ---------------------------------------------------------------- what a change says

def test_woe_change_reports_points_from_the_scaling_formula():
    diff = diff_models(base(), variant(lambda d: feature(d, "age")["bins"][1].update(woe=0.2)))
    change = only(diff, ChangeKind.BIN_VALUE_CHANGED)
    # points = −factor · coefficient · WoE (CHECKS.md §1, from memory); coefficient −0.9
    assert change.old["points"] == pytest.approx(-FACTOR * -0.9 * 0.1, abs=1e-9)
    assert change.new["points"] == pytest.approx(-FACTOR * -0.9 * 0.2, abs=1e-9)
    assert change.delta == pytest.approx(-FACTOR * -0.9 * 0.1, abs=1e-9)
    assert "[25, 40)" in change.summary
    assert change.feature == "age"


def test_edge_move_reports_the_range_that_changed_bin():
    diff = diff_models(base(), variant(_age_bins((-INF, 25, -0.6), (25, 45, 0.1), (45, 60, 0.4), (60, INF, 0.7))))
    moved = only(diff, ChangeKind.EDGES_MOVED)
    assert (moved.old, moved.new) == ([40.0], [45.0])
    assert "edge moved: 40 → 45" in moved.summary
    value = only(diff, ChangeKind.BIN_VALUE_CHANGED)
    assert "in [40, 45)" in value.summary  # ages 40 to 45 now fall in the bin below
    assert value.delta == pytest.approx(-FACTOR * -0.9 * (0.1 - 0.4), abs=1e-9)


def test_closed_side_change_reports_each_edge_value():
    diff = diff_models(base(), variant(_many(_set(("features", "age", "closed"), "upper"),
                                             _set(("features", "age", "nan"), "(60, inf]"))))
    values = [c.summary for c in diff.changes if c.kind is ChangeKind.BIN_VALUE_CHANGED]
    assert len(values) == 3
    assert [s.split(":")[0] for s in values] == ["age = 25", "age = 40", "age = 60"]


def test_category_move_names_the_value_and_both_groups():
    diff = diff_models(base(), variant(lambda d: (feature(d, "region")["groups"][0].update(values=["N1"]),
                                                  feature(d, "region")["groups"][1].update(values=["S1", "S2", "N2"]))))
    moved = only(diff, ChangeKind.CATEGORY_MOVED)
    assert moved.old == {"group": "north", "values": ["N2"]}
    assert moved.new == {"group": "south", "values": ["N2"]}
    assert moved.delta == pytest.approx(FACTOR * (0.3 - -0.2), abs=1e-9)  # points = −factor · log-odds


def test_nan_route_change_names_both_places():
    diff = diff_models(base(), variant(lambda d: feature(d, "age").pop("nan")))
    route = only(diff, ChangeKind.SPECIAL_ROUTE_CHANGED)
    assert (route.old, route.new) == ("top bin", "missing bin")
    assert "NaN" in route.summary


def test_linear_restatement_with_the_same_slope_changes_no_score():
    diff = diff_models(base(), variant(_many(_set(("features", "utilisation", "coefficient"), 2.4),
                                             _set(("features", "utilisation", "scale"), 2.0))))
    assert {c.effect for c in diff.changes} == {Effect.NONE}
    assert diff.score_map is not None and diff.score_map.kind == "identical"


# ---------------------------------------------------------------- what happens to every score

def test_base_score_600_to_620_is_a_constant_shift_of_20_points():
    # CHECKS.md §1 (from memory): offset = base score − factor · ln(base odds), so raising the
    # base score by 20 at the same odds and PDO moves every score by +20.
    diff = diff_models(base(), variant(_set(("scaling", "base_score"), 620)))
    assert diff.score_map.kind == "constant_shift"
    assert diff.score_map.shift == pytest.approx(20.0, abs=1e-9)
    assert diff.score_map.pd_unchanged
    assert "+20 points" in diff.score_map.summary


def test_doubling_the_base_odds_shifts_every_score_by_minus_one_pdo():
    # CHECKS.md §1 (from memory): at 600 points for 50:1 with PDO 20, odds of 100:1 score 620;
    # so declaring 600 points for 100:1 instead moves every score down by 20.
    diff = diff_models(base(), variant(_set(("scaling", "base_odds"), 100)))
    assert diff.score_map.kind == "constant_shift"
    assert diff.score_map.shift == pytest.approx(-20.0, abs=1e-9)


def test_intercept_change_shifts_every_score_by_factor_times_the_change():
    # score = offset − factor · η (CHECKS.md §1, from memory): η up by 0.2 → score down by factor · 0.2
    diff = diff_models(base(), variant(_set(("intercept",), -2.3)))
    assert diff.score_map.kind == "constant_shift"
    assert diff.score_map.shift == pytest.approx(-FACTOR * 0.2, abs=1e-9)
    assert not diff.score_map.pd_unchanged


def test_pdo_change_is_not_a_constant_shift():
    # Without features given in points, a new PDO stretches every score about the base:
    # new = offset_new − factor_new · η with η unchanged (CHECKS.md §1, from memory).
    old, new = variant(_drop_tenure), variant(_many(_drop_tenure, _set(("scaling", "pdo"), 40)))
    diff = diff_models(old, new)
    assert diff.effect is Effect.SCALING_ONLY
    assert diff.score_map.kind == "linear"
    assert diff.score_map.shift is None
    assert diff.score_map.slope == pytest.approx(2.0)
    # the point with odds 50:1 (η = −ln 50) scores 600 in both versions
    assert diff.score_map.intercept + diff.score_map.slope * 600 == pytest.approx(600.0)
    assert diff.score_map.pd_unchanged


def test_pdo_change_with_points_features_has_no_single_rule():
    diff = diff_models(base(), variant(_set(("scaling", "pdo"), 40)))
    assert diff.score_map is None


def test_feature_change_has_no_score_map():
    diff = diff_models(base(), variant(lambda d: feature(d, "age")["bins"][1].update(woe=0.2)))
    assert diff.score_map is None


# ---------------------------------------------------------------- overall class

def test_changes_in_two_features_are_structure():
    diff = diff_models(base(), variant(lambda d: (feature(d, "age")["bins"][1].update(woe=0.2),
                                                  feature(d, "region")["missing"].update(log_odds=0.1))))
    assert diff.effect is Effect.STRUCTURE
    assert diff.changed_features == ("age", "region")


def test_one_feature_and_the_intercept_are_one_feature():
    diff = diff_models(base(), variant(lambda d: (feature(d, "age")["bins"][1].update(woe=0.2),
                                                  d.update(intercept=-2.4))))
    assert diff.effect is Effect.ONE_FEATURE
