"""The spec's JSON Schema, exported from the typed model, so editors can check spec files.

The shipped copy is ``scoremon/spec/spec.schema.json``; ``scoremon schema`` prints the live
one, and a test keeps the two equal (regenerate with ``scoremon schema --out``).
"""
from __future__ import annotations

import json
from pathlib import Path

from .model import Spec

SHIPPED_SCHEMA = Path(__file__).with_name("spec.schema.json")


def spec_json_schema() -> dict:
    """The JSON Schema (draft 2020-12) of a spec file."""
    schema = Spec.model_json_schema()
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["title"] = "scoremon model spec"
    return schema


def schema_text() -> str:
    return json.dumps(spec_json_schema(), indent=2, sort_keys=True) + "\n"
