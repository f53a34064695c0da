"""The fingerprint follows the model, not the text.

Reformatting, reordering what has no order, and stating a default explicitly keep the
fingerprint; every change that can alter a score, a bin, a grade or a reason changes it.
All variants are edits of ``tests/fixtures/small.yaml``.
"""
import json
import random
from pathlib import Path

import pytest
import yaml

from scoremon.spec import canonical_form, fingerprint, parse_spec

SMALL = (Path(__file__).resolve().parent.parent / "fixtures" / "small.yaml").read_text(encoding="utf-8")
BASE = fingerprint(parse_spec(SMALL))

# The same model as small.yaml written differently: block style, comments, quotes, keys and
# lists in other orders, defaults spelt out.
RESTYLED = """
scaling: {pdo: 20.0, base_odds: 50.0, base_score: 600.0}   # rounding left at its default
reasons:
  statements:
  - code: "R1"
    features: ['age']
    text: "Young applicant"
  - {features: [region], code: R2, text: 'Region risk'}
  - {text: High utilisation, code: R3, features: [utilisation], reference: null}
  count: 2
intercept: -2
grades:
- {upper: 600, name: C, lower: -.inf}
- {lower: 640, upper: .inf, name: A}
- name: B
  upper: 640
  lower: 600
features:
- type: numeric
  name: "age"
  column: age              # the default: the feature's own name
  description: ""
  bins:
  - lower: 40
    upper: .INF
    woe: 0.60
  - {woe: -0.5, upper: 25.0, lower: -.Inf, label: "[-inf, 25)"}
  - {lower: 25, upper: 40, woe: 1.0e-1}
  coefficient: -1
  missing: {label: missing, woe: -0.2}
  nan: missing
  positive_infinity: "[40, inf)"
  negative_infinity: "[-inf, 25)"
- name: region
  column: "region_code"
  type: categorical
  other: {log_odds: 0.05, label: elsewhere, values: []}
  missing:
    log_odds: 0.2
  groups:
  - {values: ["S1"], label: south, log_odds: -0.1}
  - values:
    - N2
    - N1
    label: north
    log_odds: 0.3
- {name: utilisation, type: linear, coefficient: 1.5, lower: 0.0, upper: 1.2, center: 0, scale: 1, missing: {log_odds: 0.4}}
model:
  performance_window_months: 12
  event: "90 days past due within 12 months"
  intended_use: unit tests
  effective_date: 2026-01-01
  owner: 'Test Team'
  version: "3"
  name: small_test_model
  description: ''
"""


def edited(*replacements: tuple[str, str]) -> str:
    text = SMALL
    for old, new in replacements:
        assert text.count(old) == 1, f"{old!r} must appear once in small.yaml"
        text = text.replace(old, new)
    return text


def fingerprint_of(text: str) -> str:
    return fingerprint(parse_spec(text))


def test_restyled_spec_has_the_same_fingerprint():
    assert fingerprint_of(RESTYLED) == BASE


@pytest.mark.parametrize("flow", [True, False], ids=["flow", "block"])
def test_yaml_written_back_in_one_style_has_the_same_fingerprint(flow):
    data = yaml.safe_load(SMALL)
    assert fingerprint_of(yaml.safe_dump(data, default_flow_style=flow, sort_keys=True)) == BASE


# Lists whose order carries no meaning. Features and reason statements keep theirs: the order
# of features is the order of output columns, and ties between reasons go to the first listed.
UNORDERED = {("features", "*", "bins"), ("features", "*", "groups"), ("features", "*", "groups", "*", "values"),
             ("grades",)}


@pytest.mark.parametrize("seed", range(8))
def test_shuffling_what_has_no_order_keeps_the_fingerprint(seed):
    shuffle = random.Random(seed).shuffle

    def shuffled(node, path=()):
        if isinstance(node, dict):
            keys = list(node)
            shuffle(keys)
            return {key: shuffled(node[key], path + (key,)) for key in keys}
        if isinstance(node, list):
            items = [shuffled(item, path + ("*",)) for item in node]
            if path in UNORDERED:
                shuffle(items)
            return items
        return node

    text = yaml.safe_dump(shuffled(yaml.safe_load(SMALL)), sort_keys=False)
    assert text != yaml.safe_dump(yaml.safe_load(SMALL), sort_keys=False)
    assert fingerprint_of(text) == BASE


@pytest.mark.parametrize("old, new", [
    ("    closed: lower\n", ""),
    ("  rounding: none\n", ""),
    ("    missing: {woe: -0.2}", "    missing: {woe: -0.2}\n    nan: missing"),
    ("    missing: {woe: -0.2}", "    missing: {woe: -0.2, label: missing}"),
    ("{lower: 25, upper: 40, woe: 0.1}", "{lower: 25, upper: 40, woe: 0.1, label: '[25, 40)'}"),
    ("    missing: {log_odds: 0.4}", "    missing: {log_odds: 0.4}\n    center: 0.0\n    scale: 1.0"),
    ("  - name: utilisation", "  - name: utilisation\n    column: utilisation"),
    ("  version: 3", "  version: '3'"),
    ("intercept: -2.0", "intercept: -2"),
    ("{lower: 25, upper: 40, woe: 0.1}", "{lower: 25, upper: 40, woe: 0.100}"),
    ("{lower: 40, upper: .inf, woe: 0.6}", "{lower: 40, upper: .inf, woe: 0.6}\n    positive_infinity: '[40, inf)'"),
    ("    missing: {woe: -0.2}", "    missing: {woe: -0.2}\n    negative_infinity: '[-inf, 25)'"),
    ("    other: {label: elsewhere, log_odds: 0.05}", "    other: {label: elsewhere, log_odds: 0.05, values: []}"),
], ids=["closed", "rounding", "nan", "missing-label", "interval-label", "center-scale", "column", "version-quoted",
        "integer-intercept", "trailing-zero", "positive-infinity", "negative-infinity", "other-values"])
def test_stating_a_default_keeps_the_fingerprint(old, new):
    assert fingerprint_of(edited((old, new))) == BASE


def test_an_unstated_reason_count_is_the_number_of_statements_when_fewer():
    # With three statements the default count (3) and `count: 3` give every row three reasons.
    assert fingerprint_of(edited(("  count: 2\n", ""))) == fingerprint_of(edited(("  count: 2\n", "  count: 3\n")))
    # With no statements at all the count has nothing to choose from.
    without = SMALL[: SMALL.index("reasons:")]
    assert fingerprint_of(without) == fingerprint_of(without + "reasons: {count: 0}\n")


def test_negative_zero_is_zero():
    assert fingerprint_of(edited(("intercept: -2.0", "intercept: 0.0"))) == \
        fingerprint_of(edited(("intercept: -2.0", "intercept: -0.0")))


def test_the_baseline_is_not_part_of_the_model():
    baseline = "baseline:\n  rows: 1000\n  score_bands:\n    - {lower: -.inf, upper: .inf, share: 1.0}\n"
    assert fingerprint_of(SMALL + baseline) == BASE


SCORE_CHANGES = {
    "bin-edge": [("upper: 40, woe: 0.1}", "upper: 41, woe: 0.1}"),
                 ("{lower: 40, upper: .inf", "{lower: 41, upper: .inf")],
    "closed-side": ("    closed: lower", "    closed: upper"),
    "woe": ("{lower: 25, upper: 40, woe: 0.1}", "{lower: 25, upper: 40, woe: 0.11}"),
    "coefficient": ("    coefficient: -1.0", "    coefficient: -1.1"),
    "missing-value": ("    missing: {woe: -0.2}", "    missing: {woe: -0.3}"),
    "intercept": ("intercept: -2.0", "intercept: -2.01"),
    "base-score": ("  base_score: 600", "  base_score: 601"),
    "base-odds": ("  base_odds: 50", "  base_odds: 51"),
    "pdo": ("  pdo: 20", "  pdo: 40"),
    "rounding": ("  rounding: none", "  rounding: per_bin"),
    "category-moved": ("values: [N1, N2]", "values: [N1]"),
    "category-to-other": ("{label: elsewhere, log_odds: 0.05}", "{label: elsewhere, log_odds: 0.05, values: [N3]}"),
    "group-value": ("{label: south, values: [S1], log_odds: -0.1}", "{label: south, values: [S1], log_odds: -0.2}"),
    "group-label": ("{label: south, values: [S1]", "{label: southern, values: [S1]"),
    "other-value": ("{label: elsewhere, log_odds: 0.05}", "{label: elsewhere, log_odds: 0.06}"),
    "column": ("    column: region_code", "    column: region"),
    "nan-route": ("    missing: {woe: -0.2}", "    missing: {woe: -0.2}\n    nan: '[40, inf)'"),
    "infinity-route": ("    missing: {woe: -0.2}", "    missing: {woe: -0.2}\n    positive_infinity: missing"),
    "linear-coefficient": ("    coefficient: 1.5", "    coefficient: 1.6"),
    "linear-clip": ("    upper: 1.2", "    upper: 1.3"),
    "linear-center": ("    upper: 1.2", "    upper: 1.2\n    center: 0.5"),
    "linear-scale": ("    upper: 1.2", "    upper: 1.2\n    scale: 2"),
    "grade-edge": [("{name: A, lower: 640", "{name: A, lower: 645"),
                   ("lower: 600, upper: 640}", "lower: 600, upper: 645}")],
    "grade-name": ("{name: B, lower: 600, upper: 640}", "{name: BB, lower: 600, upper: 640}"),
    "reason-mapping": [("Region risk, features: [region]}", "Region risk, features: [utilisation]}"),
                       ("High utilisation, features: [utilisation]}", "High utilisation, features: [region]}")],
    "reason-count": ("  count: 2", "  count: 3"),
    "reason-order": ("    - {code: R1, text: Young applicant, features: [age]}\n"
                     "    - {code: R2, text: Region risk, features: [region]}",
                     "    - {code: R2, text: Region risk, features: [region]}\n"
                     "    - {code: R1, text: Young applicant, features: [age]}"),
    "reason-reference": ("features: [age]}", "features: [age], reference: 10}"),
    "model-version": ("  version: 3", "  version: 4"),
}


def changed(change) -> str:
    return edited(*change) if isinstance(change, list) else edited(change)


@pytest.mark.parametrize("change", SCORE_CHANGES.values(), ids=SCORE_CHANGES.keys())
def test_a_change_that_can_alter_an_output_changes_the_fingerprint(change):
    assert fingerprint_of(changed(change)) != BASE


def test_every_change_gives_its_own_fingerprint():
    prints = {fingerprint_of(changed(change)) for change in SCORE_CHANGES.values()}
    assert len(prints) == len(SCORE_CHANGES)


def test_canonical_form_survives_json():
    form = canonical_form(parse_spec(SMALL))
    text = json.dumps(form, sort_keys=True)
    assert json.loads(text) == form
    assert json.dumps(json.loads(text), sort_keys=True) == text


def test_canonical_form_is_the_same_for_every_writing_of_the_model():
    assert canonical_form(parse_spec(RESTYLED)) == canonical_form(parse_spec(SMALL))


def test_canonical_form_orders_bins_groups_values_and_grades():
    form = canonical_form(parse_spec(RESTYLED))
    age, region, _ = form["features"]
    assert [b["lower"] for b in age["bins"]] == [float("-inf"), 25.0, 40.0]
    assert [g["label"] for g in region["groups"]] == ["north", "south"]
    assert region["groups"][0]["values"] == ["N1", "N2"]
    assert [g["name"] for g in form["grades"]] == ["C", "B", "A"]
    assert age["nan"] == "missing" and age["positive_infinity"] == "[40, inf)"


def test_fingerprint_is_pinned():
    # Fingerprints are stored with every scored row and every monitoring run. A change of the
    # canonical form (or of a default in the model) changes all of them, so it must be made on
    # purpose: update this value in the same commit and say so in its message.
    assert BASE == "1cd64850b6a4935e"
