"""The canonical form of a validated spec and its semantic fingerprint.

The canonical form is the spec as data with every default filled in, every implied label and
route resolved, and every order that carries no meaning fixed (numeric bins by lower edge,
category groups by label, values sorted, grades by lower edge); -0.0 is written as 0.0 and
the reason count as the number of reasons a row can get. Its SHA-256 is the fingerprint:
reformatting the YAML, reordering keys or bins keeps it; any change that can alter an output
changes it. The baseline is reference data about the development sample, not part of the
model, and is left out; so is the development record (how the model was fitted): it changes
no output, and scored rows carry the fingerprint, so correcting or completing the record must
not cut them off from the model.
"""
from __future__ import annotations

import hashlib
import json

from .model import CategoricalFeature, NumericFeature, Spec
from .terms import numeric_bins_in_order, special_routes

FINGERPRINT_LENGTH = 16


def _sorted_values(values) -> list:
    return sorted(values, key=lambda v: (isinstance(v, str), v))


def _feature(feature) -> dict:
    data = feature.model_dump(mode="json")
    data["column"] = feature.source_column
    if isinstance(feature, NumericFeature):
        bins = []
        for b in numeric_bins_in_order(feature):
            item = b.model_dump(mode="json")
            item["label"] = feature.bin_label(b)
            bins.append(item)
        data["bins"] = bins
        data.update(special_routes(feature))
    elif isinstance(feature, CategoricalFeature):
        groups = sorted((g.model_dump(mode="json") for g in feature.groups), key=lambda g: g["label"])
        for group in groups:
            group["values"] = _sorted_values(group["values"])
        data["groups"] = groups
        data["other"]["values"] = _sorted_values(data["other"]["values"])
    return data


def _without_negative_zero(data):
    """-0.0 and 0.0 score alike (as an edge, a WoE or points); write both as 0.0."""
    if isinstance(data, dict):
        return {key: _without_negative_zero(value) for key, value in data.items()}
    if isinstance(data, list):
        return [_without_negative_zero(value) for value in data]
    if isinstance(data, float) and data == 0.0:
        return 0.0
    return data


def canonical_form(spec: Spec) -> dict:
    """The spec as plain data in canonical form (see the module docstring).

    The result holds only dicts, lists, text, numbers (±inf for open edges) and None, so
    ``json.loads(json.dumps(form)) == form``.
    """
    data = spec.model_dump(mode="json", exclude={"baseline", "development"})
    data["features"] = [_feature(f) for f in spec.features]
    data["grades"] = sorted(data["grades"], key=lambda g: g["lower"])
    # Rows get at most one reason per statement: an unstated count (3) over two statements gives two.
    data["reasons"]["count"] = min(spec.reasons.count, len(spec.reasons.statements))
    # The PD's source is written only when it is the score: the log-odds were the only source
    # before the key existed, so specs that report them keep their fingerprints.
    del data["scaling"]["pd_from"]
    if spec.scaling.reported_pd == "score":
        data["scaling"]["pd_from"] = "score"
    return _without_negative_zero(data)


def fingerprint(spec: Spec) -> str:
    """The first 16 hex digits of the SHA-256 of the canonical form."""
    text = json.dumps(canonical_form(spec), sort_keys=True, separators=(",", ":"), allow_nan=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:FINGERPRINT_LENGTH]
