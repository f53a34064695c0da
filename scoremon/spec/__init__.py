"""The model spec: loading with locations, the typed model, checks, fingerprint and schema."""
from .canonical import canonical_form, fingerprint
from .loading import load_spec, parse_spec
from .model import CategoricalFeature, LinearFeature, NumericFeature, Spec
from .schema import schema_text, spec_json_schema

__all__ = [
    "CategoricalFeature",
    "LinearFeature",
    "NumericFeature",
    "Spec",
    "canonical_form",
    "fingerprint",
    "load_spec",
    "parse_spec",
    "schema_text",
    "spec_json_schema",
]
