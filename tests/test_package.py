"""The package's public surface."""
import json

import scoremon
from scoremon.spec.schema import SHIPPED_SCHEMA, spec_json_schema


def test_the_public_names_are_these():
    # the package's face: change this list on purpose, with the README's library section
    assert scoremon.__all__ == [
        "EngineError", "InputError", "Problem", "ScoreResult", "ScoremonError", "SpecError", "canonical_form",
        "compile_model", "compile_sql", "fingerprint", "load_spec", "open_engine", "parse_spec", "render_sql",
        "score", "source_relation",
    ]


def test_all_is_sorted_and_complete():
    assert scoremon.__all__ == sorted(scoremon.__all__)
    for name in scoremon.__all__:
        assert hasattr(scoremon, name), name


def test_shipped_schema_matches_model():
    # regenerate on purpose with: scoremon schema --out scoremon/spec/spec.schema.json
    assert json.loads(SHIPPED_SCHEMA.read_text()) == spec_json_schema()
