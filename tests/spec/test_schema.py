"""The exported JSON Schema, checked with the `jsonschema` library as an editor would use it.

An editor's YAML language server reads YAML 1.2, where ``2026-01-01`` stays text; the specs are
therefore loaded with PyYAML and dates turned back into their ISO text before validation.
The schema checks shape only: rules across keys (bins cover the line, ...) need
``scoremon check``, so only shape-broken fixtures are expected to be rejected.
"""
import datetime
from pathlib import Path

import jsonschema
import pytest
import yaml

from scoremon.spec.schema import spec_json_schema

TESTS = Path(__file__).resolve().parent.parent
VALID = [TESTS / "fixtures" / "small.yaml", TESTS.parent / "demo_warehouse" / "spec_v1.yaml"]
BROKEN = TESTS / "fixtures" / "broken"


def as_an_editor_reads(path: Path):
    def plain(node):
        if isinstance(node, dict):
            return {key: plain(value) for key, value in node.items()}
        if isinstance(node, list):
            return [plain(value) for value in node]
        if isinstance(node, datetime.date):
            return node.isoformat()
        return node

    return plain(yaml.safe_load(path.read_text(encoding="utf-8")))


def error_paths(data) -> list[str]:
    validator = jsonschema.Draft202012Validator(spec_json_schema())
    return sorted(error.json_path for error in validator.iter_errors(data))


def test_schema_is_a_valid_draft_2020_12_schema():
    jsonschema.Draft202012Validator.check_schema(spec_json_schema())  # [lib] jsonschema's meta-schema


@pytest.mark.parametrize("path", VALID, ids=[p.stem for p in VALID])
def test_schema_accepts_valid_specs(path):
    # the loader reads `version: 3` as the text "3"; the schema accepts a number there too
    assert error_paths(as_an_editor_reads(path)) == []


@pytest.mark.parametrize("name, paths", [
    ("bad_rounding", ["$.scaling.rounding"]),
    ("base_odds_not_positive", ["$.scaling.base_odds"]),
    ("pdo_not_positive", ["$.scaling.pdo"]),
    ("wrong_type", ["$.scaling.pdo"]),
    ("performance_window_out_of_range", ["$.model.performance_window_months"]),
    ("missing_required_key", ["$.model"]),
    ("missing_top_level_key", ["$"]),
    ("unknown_key_no_match", ["$.scaling"]),
    ("unknown_key_typo", ["$.features[0]"]),
    ("unknown_feature_type", ["$.features[1]"]),
    ("missing_feature_type", ["$.features[1]"]),
    ("feature_not_mapping", ["$.features[1]"]),
    ("several_problems", ["$.features[1]", "$.scaling.rounding"]),
    ("top_level_not_mapping", ["$"]),
])
def test_schema_rejects_shape_problems_where_the_loader_does(name, paths):
    assert error_paths(as_an_editor_reads(BROKEN / f"{name}.yaml")) == paths


@pytest.mark.parametrize("name", ["bins_gap", "category_in_two_groups", "grades_overlap", "reason_unknown_feature"])
def test_schema_leaves_rules_across_keys_to_the_loader(name):
    assert error_paths(as_an_editor_reads(BROKEN / f"{name}.yaml")) == []
