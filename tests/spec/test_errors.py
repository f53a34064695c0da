"""Every broken-spec fixture is reported with the exact message, line and column.

Each file in ``tests/fixtures/broken/`` is a small spec with one kind of problem (a few have
several) and a first-line comment saying what is wrong. The expected lines below were checked
by hand against the fixture: the line and column are where the key or value to edit stands
(1-based, columns counted in characters), and the message says what is wrong and how to fix it.
"""
from pathlib import Path

import pytest

from scoremon.errors import SpecError
from scoremon.spec import load_spec

BROKEN = Path(__file__).resolve().parent.parent / "fixtures" / "broken"

# (fixture name, every problem as "line:column: path: message", in the order reported)
CASES = [
    ('bad_rounding', [
        "15:13: scaling.rounding: 'half_even' is not allowed; use 'none', 'per_bin' or 'total'",
    ]),
    ('base_odds_not_positive', [
        '13:14: scaling.base_odds: must be above 0, got 0',
    ]),
    ('bin_edges_reversed', [
        '21:21: features[0].bins[1].upper: upper edge 25 is not above lower edge 40; edges must increase',
    ]),
    ('bins_gap', [
        '21:10: features[0].bins[1].lower: nothing covers 25 to 30: bins[0] ends at 25; set this lower edge '
        'to 25',
    ]),
    ('bins_overlap', [
        '22:10: features[0].bins[2].lower: overlaps bins[1], which runs to 40; set this lower edge to 40',
    ]),
    ('edge_too_many_digits', [
        '22:21: features[0].bins[2].upper: edge 9007199254740993 has more digits than a double holds and reads '
        'as 9007199254740992; write 9007199254740992 (or an edge with at most 15 significant digits)',
        '23:10: features[0].bins[3].lower: edge 9007199254740993 has more digits than a double holds and reads '
        'as 9007199254740992; write 9007199254740992 (or an edge with at most 15 significant digits)',
    ]),
    ('category_in_two_groups', [
        "28:37: features[1].groups[1].values[1]: category 'N2' is already in group 'north'; a category "
        'belongs to one group only',
    ]),
    ('duplicate_feature_names', [
        "24:5: features[1].name: feature name 'AGE' is already used by features[0] (names are compared "
        'ignoring case, as SQL engines do); rename one',
    ]),
    ('duplicate_grade_names', [
        "33:6: grades[1].name: grade name 'A' is already used by grades[0]; give each its own grade name",
    ]),
    ('duplicate_key', [
        '14:3: scaling.base_odds: key appears twice (first on line 13); keep one',
    ]),
    ('duplicate_labels', [
        "28:10: features[1].groups[1].label: label 'north' is already used by groups[0]; give each its own "
        'label',
    ]),
    ('empty', [
        '1:1: the file is empty; a spec needs at least model, intercept, scaling, features and grades',
    ]),
    ('feature_in_two_reasons', [
        "38:56: reasons.statements[1].features[1]: feature 'age' already gives reason 'R1'; a feature "
        'belongs to one reason only',
    ]),
    ('feature_name_control_character', [
        "24:5: features[1].name: feature name 'reg\\tion' contains a control character; use printable "
        'characters only',
    ]),
    ('feature_name_too_long', [
        '24:5: features[1].name: feature name '
        "'region_of_the_applicants_registered_home_address_at_application' is 63 bytes long, too long for a "
        "SQL column once '_points' is added (PostgreSQL keeps 63 bytes of a name); shorten it to at most 56 "
        'bytes',
    ]),
    ('feature_not_mapping', [
        "24:5: features[1]: expected a mapping of keys, got 'region'",
    ]),
    ('grades_gap', [
        '32:15: grades[0].lower: nothing covers 580 to 600: grades[1] ends at 580; set this lower edge to 580',
    ]),
    ('grades_not_covering', [
        '32:27: grades[0].upper: the highest grade ends at 900, leaving higher values nowhere; set its upper '
        'edge to .inf',
        '33:15: grades[1].lower: the lowest grade starts at 300, leaving lower values nowhere; set its lower '
        'edge to -.inf',
    ]),
    ('grades_overlap', [
        '32:15: grades[0].lower: overlaps grades[1], which runs to 600; set this lower edge to 600',
    ]),
    ('highest_bin_not_open', [
        '22:21: features[0].bins[2].upper: the highest bin ends at 120, leaving higher values nowhere; set '
        'its upper edge to .inf',
    ]),
    ('impossible_date', [
        '6:19: model.effective_date: 2026-02-30 is not a day of the calendar; give a date that exists, as '
        'YYYY-MM-DD',
    ]),
    ('linear_bounds_reversed', [
        '35:5: features[2].upper: upper clip -1 is not above lower clip 0; swap or widen them',
    ]),
    ('linear_missing_woe', [
        "36:15: features[2].missing.woe: a linear feature's missing bin cannot use woe (there are no bins "
        'for the coefficient to weigh); give log_odds or points',
    ]),
    ('linear_scale_zero', [
        '36:5: features[2].scale: scale is 0 (it divides the value); use a non-zero scale, e.g. 1',
    ]),
    ('lowest_bin_not_open', [
        '20:10: features[0].bins[0].lower: the lowest bin starts at 0, leaving lower values nowhere; set its '
        'lower edge to -.inf',
    ]),
    ('missing_feature_type', [
        '24:5: features[1]: the feature has no `type:`; add one of numeric, categorical or linear',
    ]),
    ('missing_required_key', [
        '2:1: model.owner: required key is missing; add `owner:` under `model:`',
    ]),
    ('missing_top_level_key', [
        '2:1: grades: required key is missing; add `grades:` at the top level',
    ]),
    ('mixed_category_kinds', [
        "28:37: features[1].groups[1].values[1]: category 7 is a number while 'N1' (groups[0].values[0]) is "
        "text; write all of a feature's categories alike: quote numbers to make them text, or use only whole "
        'numbers to match an integer column',
    ]),
    ('mixed_value_kinds', [
        '21:32: features[0].bins[1].points: uses points while bins[0] uses woe; give every bin of a feature '
        'the same kind of value',
    ]),
    ('nan_edge', [
        '22:17: features[0].bins[2].lower: an edge cannot be .nan; use a number, .inf or -.inf',
    ]),
    ('nan_woe', [
        '21:37: features[0].bins[1].woe: got .nan; give a finite number (.inf, -.inf and .nan are not '
        'allowed here)',
    ]),
    ('no_value_in_bin', [
        '28:9: features[1].groups[1]: gives no value; add one of woe, log_odds or points',
    ]),
    ('non_finite', [
        '10:12: intercept: got .inf; give a finite number (.inf, -.inf and .nan are not allowed here)',
    ]),
    ('pdo_not_positive', [
        '14:8: scaling.pdo: must be above 0, got -20',
    ]),
    ('performance_window_out_of_range', [
        '9:30: model.performance_window_months: must be at least 1, got 0',
    ]),
    ('reason_unknown_feature', [
        "38:48: reasons.statements[1].features[0]: no feature is named 'regoin'; did you mean 'region'?",
    ]),
    ('reasons_count_too_high', [
        '35:3: reasons.count: asks for 3 reasons but 2 statements are declared; lower count to 2 or add '
        'statements',
    ]),
    ('route_unknown_label', [
        "24:5: features[0].nan: nan goes to 'mising', which is no bin of this feature; did you mean 'missing'?",
        "25:5: features[0].positive_infinity: positive_infinity goes to 'top', which is no bin of this "
        "feature; use one of '[-inf, 25)', '[25, 40)', '[40, inf)', 'missing'",
    ]),
    ('several_problems', [
        "15:13: scaling.rounding: 'nearest' is not allowed; use 'none', 'per_bin' or 'total'",
        '22:10: features[0].bins[1].lower: nothing covers 25 to 30: bins[0] ends at 25; set this lower edge '
        'to 25',
        "29:48: features[1].groups[1].log_odds: expected a number, got 'low'",
        '33:15: grades[0].lower: nothing covers 590 to 600: grades[1] ends at 590; set this lower edge to 590',
        '36:3: reasons.count: asks for 5 reasons but 2 statements are declared; lower count to 2 or add '
        'statements',
    ]),
    ('several_rule_problems', [
        '20:10: features[0].bins[0].lower: the lowest bin starts at 0, leaving lower values nowhere; set its '
        'lower edge to -.inf',
        '22:10: features[0].bins[2].lower: overlaps bins[1], which runs to 40; set this lower edge to 40',
        "28:37: features[1].groups[1].values[1]: category 'N1' is already in group 'north'; a category "
        'belongs to one group only',
        "33:6: grades[1].name: grade name 'B' is already used by grades[0]; give each its own grade name",
    ]),
    ('top_level_not_mapping', [
        '2:1: the top level is a list, not a mapping; start the file with keys such as `model:` and `features:`',
    ]),
    ('two_values_in_bin', [
        '21:9: features[0].bins[1]: gives both woe and points; keep exactly one',
    ]),
    ('unknown_feature_type', [
        "25:11: features[1].type: unknown feature type 'categorial'; did you mean 'categorical'?",
    ]),
    ('unknown_key_no_match', [
        "15:3: scaling.colour: unknown key 'colour'; valid keys here: base_score, base_odds, pdo, rounding, pd_from",
    ]),
    ('unknown_key_typo', [
        "18:5: features[0].coeficient: unknown key 'coeficient'; did you mean 'coefficient'?",
    ]),
    ('woe_without_coefficient', [
        '16:5: features[0]: bins give woe but the feature has no coefficient; add `coefficient:` (the fitted '
        'coefficient that multiplies WoE)',
    ]),
    ('wrong_type', [
        "14:8: scaling.pdo: expected a number, got 'twenty'",
    ]),
    ('yaml_syntax', [
        "22:9: not valid YAML: expected ',' or '}', but got '{' (in a flow mapping that starts at line 21, "
        'column 9); close the bracket or add the missing comma',
    ]),
    ('yaml_tab', [
        "14:1: not valid YAML: found character '\\t' that cannot start any token; indent with spaces (YAML "
        'does not allow tabs)',
    ]),
]


@pytest.mark.parametrize("name, expected", CASES, ids=[name for name, _ in CASES])
def test_broken_fixture_reports_every_problem_at_its_place(name, expected):
    path = BROKEN / f"{name}.yaml"
    with pytest.raises(SpecError) as caught:
        load_spec(path)
    assert [str(problem) for problem in caught.value.problems] == [f"{path}:{line}" for line in expected]


def test_every_fixture_has_a_case_and_every_case_a_fixture():
    assert sorted(p.stem for p in BROKEN.glob("*.yaml")) == sorted(name for name, _ in CASES)


@pytest.mark.parametrize("name", [name for name, _ in CASES])
def test_fixture_says_what_is_broken_on_its_first_line(name):
    first_line = (BROKEN / f"{name}.yaml").read_text(encoding="utf-8").splitlines()[0]
    assert first_line.startswith("# Broken on purpose: ")


def test_problems_come_ordered_by_line_then_column():
    with pytest.raises(SpecError) as caught:
        load_spec(BROKEN / "several_problems.yaml")
    places = [(p.line, p.column) for p in caught.value.problems]
    assert places == sorted(places)
    assert len(places) == 5


def test_error_text_is_one_line_per_problem():
    path = BROKEN / "several_rule_problems.yaml"
    with pytest.raises(SpecError) as caught:
        load_spec(path)
    lines = str(caught.value).splitlines()
    assert len(lines) == 4
    assert all(line.startswith(f"{path}:") for line in lines)
