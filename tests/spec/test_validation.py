"""Validation beyond the one-problem fixtures: how problems combine, and rarer inputs.

Each test edits the small valid spec (``tests/fixtures/small.yaml``) in one place and asserts
the full problem lines: "line:column: path: message".
"""
from pathlib import Path

import pytest

from scoremon.errors import SpecError
from scoremon.spec import parse_spec
from scoremon.spec.loading import load_spec
from scoremon.spec.source import read_spec_text

SMALL = (Path(__file__).resolve().parent.parent / "fixtures" / "small.yaml").read_text(encoding="utf-8")


def edited(*replacements: tuple[str, str]) -> str:
    text = SMALL
    for old, new in replacements:
        assert text.count(old) == 1, f"{old!r} must appear once in small.yaml"
        text = text.replace(old, new)
    return text


def problems(text: str) -> list[str]:
    """Every problem line without the file name (it is "<spec>" for text)."""
    with pytest.raises(SpecError) as caught:
        parse_spec(text)
    return [str(p).removeprefix("<spec>:") for p in caught.value.problems]


def test_small_spec_is_valid():
    spec = parse_spec(SMALL)
    assert [f.name for f in spec.features] == ["age", "region", "utilisation"]


def test_spec_without_reasons_is_valid():
    # The reason count defaults to three; with no statements a row simply gets no reasons.
    text = SMALL[: SMALL.index("reasons:")]
    assert parse_spec(text).reasons.statements == []


def test_unstated_count_above_the_statements_is_not_a_problem():
    spec = parse_spec(edited(("  count: 2\n", "")))
    assert spec.reasons.count == 3 and len(spec.reasons.statements) == 3


def test_a_shape_problem_does_not_hide_rule_problems_in_other_features():
    text = edited(("    coefficient: 1.5", "    coefficient: steep"),           # shape: utilisation
                  ("{lower: 25, upper: 40, woe: 0.1}", "{lower: 26, upper: 40, woe: 0.1}"),  # rule: age
                  ("values: [S1]", "values: [S1, N1]"))                          # rule: region
    assert problems(text) == [
        "26:10: features[0].bins[1].lower: nothing covers 25 to 26: bins[0] ends at 25; set this lower edge to 25",
        "35:37: features[1].groups[1].values[1]: category 'N1' is already in group 'north'; "
        "a category belongs to one group only",
        "41:18: features[2].coefficient: expected a number, got 'steep'",
    ]


def test_a_feature_with_a_shape_problem_gets_no_rule_messages():
    # Its bins have a gap too, but its values were never accepted: only the shape is reported.
    text = edited(("{lower: 25, upper: 40, woe: 0.1}", "{lower: 26, upper: 40, woe: high}"))
    assert problems(text) == ["26:37: features[0].bins[1].woe: expected a number, got 'high'"]


def test_reasons_may_name_a_feature_that_failed_validation():
    # "utilisation" has a shape problem but is named; the reason naming it is not flagged.
    text = edited(("    coefficient: 1.5", "    coefficient: steep"))
    assert problems(text) == ["41:18: features[2].coefficient: expected a number, got 'steep'"]


def test_reasons_are_not_checked_against_features_that_are_not_a_list():
    text = edited(("features:\n  - name: age", "features: {}\nunused:\n  - name: age"))
    assert problems(text) == [
        "19:11: features: expected a list (lines starting with '- '), got a mapping",
        "20:1: unused: unknown key 'unused'; valid keys here: model, intercept, scaling, features, grades, "
        "reasons, baseline, development",
    ]


def test_names_are_compared_across_features_that_failed_validation():
    text = edited(("  - name: utilisation", "  - name: Age"), ("    coefficient: 1.5", "    coefficient: steep"),
                  ("features: [utilisation]", "features: [Age]"))
    assert problems(text) == [
        "39:5: features[2].name: feature name 'Age' is already used by features[0] "
        "(names are compared ignoring case, as SQL engines do); rename one",
        "41:18: features[2].coefficient: expected a number, got 'steep'",
    ]


def test_grades_with_a_shape_problem_get_no_coverage_messages():
    text = edited(("{name: B, lower: 600, upper: 640}", "{name: B, lower: six hundred, upper: 640}"))
    assert problems(text) == ["48:22: grades[1].lower: expected a number (or .inf / -.inf), got 'six hundred'"]


def test_reversed_edges_are_reported_without_gaps_or_overlaps_built_on_them():
    text = edited(("{lower: 25, upper: 40, woe: 0.1}", "{lower: 25, upper: 25, woe: 0.1}"))
    assert problems(text) == [
        "26:21: features[0].bins[1].upper: upper edge 25 is not above lower edge 25; edges must increase",
    ]


def test_closed_upper_bins_follow_the_same_coverage_rules():
    text = edited(("    closed: lower", "    closed: upper"), ("{lower: 40, upper: .inf", "{lower: 45, upper: .inf"))
    assert problems(text) == [
        "27:10: features[0].bins[2].lower: nothing covers 40 to 45: bins[1] ends at 40; set this lower edge to 40",
    ]


def test_yaml_reading_a_word_as_a_boolean_is_explained():
    # YAML 1.1 reads an unquoted NO (e.g. Norway's country code) as false.
    text = edited(("values: [S1]", "values: [S1, NO]"))
    assert problems(text) == [
        "35:37: features[1].groups[1].values[1]: category NO (YAML reads it as false) is neither text nor "
        "a whole number; quote it to make it text",
    ]


def test_yes_as_a_version_is_explained():
    assert problems(edited(("  version: 3", "  version: yes"))) == [
        "4:12: model.version: expected text, got yes (YAML reads it as true); quote it",
    ]


@pytest.mark.parametrize("written", ["", " ~", " null"])
def test_a_key_without_a_value_says_what_it_needs(written):
    text = edited(("  pdo: 20", f"  pdo:{written}"))
    [line] = problems(text)
    assert line.endswith("scaling.pdo: has no value; give a number")
    assert line.startswith("16:")


def test_an_unknown_literal_gets_the_closest_choice():
    assert problems(edited(("  rounding: none", "  rounding: perbin"))) == [
        "17:13: scaling.rounding: 'perbin' is not allowed; did you mean 'per_bin'?",
    ]


def test_a_key_named_like_a_feature_type_is_an_unknown_key_of_the_feature():
    # pydantic puts the feature type into error locations; only that position is dropped.
    assert problems(edited(("    closed: lower", "    closed: lower\n    linear: 3"))) == [
        "23:5: features[0].linear: unknown key 'linear'; valid keys here: name, type, column, description, closed, "
        "coefficient, bins, missing, nan, positive_infinity, negative_infinity",
    ]


def test_a_feature_type_that_is_not_text():
    assert problems(edited(("    type: linear", "    type: 5"))) == [
        "40:11: features[2].type: unknown feature type '5'; use one of numeric, categorical or linear",
    ]


def test_coefficient_without_woe_bins():
    assert problems(edited(("    column: region_code", "    column: region_code\n    coefficient: 0.8"))) == [
        "33:5: features[1].coefficient: coefficient is given but no bin uses woe; remove it, or give bins as woe",
    ]


def test_linear_missing_bin_with_two_values():
    assert problems(edited(("missing: {log_odds: 0.4}", "missing: {log_odds: 0.4, points: 3}"))) == [
        "44:5: features[2].missing: gives both log_odds and points; keep exactly one",
    ]


def test_column_name_with_a_control_character():
    assert problems(edited(("    column: region_code", '    column: "region\\u0007code"'))) == [
        "32:5: features[1].column: column name 'region\\x07code' contains a control character; "
        "use printable characters only",
    ]


def test_feature_name_with_spaces_around_it():
    assert problems(edited(("  - name: region", '  - name: " region"'))) == [
        "30:5: features[1].name: feature name ' region' starts or ends with a space; remove it",
        "55:48: reasons.statements[1].features[0]: no feature is named 'region'; did you mean ' region'?",
    ]


def test_duplicate_reason_codes():
    assert problems(edited(("{code: R3,", "{code: R1,"))) == [
        "56:8: reasons.statements[2].code: reason code 'R1' is already used by statements[0]; "
        "give each its own reason code",
    ]


def test_label_repeating_an_implied_interval_label():
    # The bin [25, 40) has no label, so it is called "[25, 40)"; another bin may not take that name.
    text = edited(("{lower: 40, upper: .inf, woe: 0.6}", "{lower: 40, upper: .inf, woe: 0.6, label: '[25, 40)'}"))
    assert problems(text) == [
        "27:44: features[0].bins[2].label: label '[25, 40)' is already used by bins[1]; give each its own label",
    ]


def test_missing_label_clashing_with_a_group_label():
    text = edited(("    missing: {log_odds: 0.2}", "    missing: {log_odds: 0.2, label: north}"))
    assert problems(text) == [
        "37:30: features[1].missing.label: label 'north' is already used by groups[0]; give each its own label",
    ]


def test_baseline_problems():
    baseline = ("baseline:\n  rows: 1000\n  score_bands:\n    - {lower: -.inf, upper: 600, share: 0.4}\n"
                "    - {lower: 620, upper: .inf, share: 0.6}\n  feature_shares:\n    regoin: {north: 1.0}\n")
    assert problems(SMALL + baseline) == [
        "61:8: baseline.score_bands[1].lower: nothing covers 600 to 620: score_bands[0] ends at 600; "
        "set this lower edge to 600",
        "63:5: baseline.feature_shares.regoin: no feature is named 'regoin'; did you mean 'region'?",
    ]


def test_a_key_given_twice_does_not_hide_other_problems():
    # The first value is the one validated; the repeat is reported where it stands.
    text = edited(("  pdo: 20", "  pdo: 20\n  pdo: 0"),
                  ("{name: B, lower: 600, upper: 640}", "{name: B, lower: 610, upper: 640}"))
    assert problems(text) == [
        "17:3: scaling.pdo: key appears twice (first on line 16); keep one",
        "49:15: grades[1].lower: nothing covers 600 to 610: grades[2] ends at 600; set this lower edge to 600",
    ]


def test_a_list_used_as_a_key():
    assert problems(SMALL + "[a, b]: 1\n") == [
        "57:1: a key must be a plain name, not a list; write a word followed by ':'",
    ]


def test_two_documents_in_one_file():
    assert problems(SMALL + "---\nmodel: {}\n") == [
        "57:1: not valid YAML: expected a single document in the stream but found another document; "
        "keep one spec per file and remove the extra '---'",
    ]


def test_an_indentation_slip():
    assert problems(edited(("  base_odds: 50", "   base_odds: 50"))) == [
        "15:13: not valid YAML: mapping values are not allowed here; quote a value that contains ': ', "
        "or indent this key like its neighbours",
    ]


def test_a_missing_file_names_the_path(tmp_path):
    path = tmp_path / "nowhere.yaml"
    with pytest.raises(SpecError) as caught:
        load_spec(path)
    assert str(caught.value) == f"{path}:1:1: no such file; check the path"


def test_positions_in_flow_and_block_style_point_at_the_same_key():
    flow = read_spec_text("bins:\n  - {lower: 1, upper: 2}\n")
    block = read_spec_text("bins:\n  - lower: 1\n    upper: 2\n")
    assert flow.locate(("bins", 0, "upper")) == (2, 16)
    assert block.locate(("bins", 0, "upper")) == (3, 5)
    assert flow.locate_value(("bins", 0, "upper")) == (2, 23)
    assert block.locate_value(("bins", 0, "upper")) == (3, 12)
    # a path that is not in the file is located at its deepest part that is
    assert block.locate(("bins", 0, "label")) == (2, 5)
