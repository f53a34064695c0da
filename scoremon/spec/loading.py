"""Turning a parsed spec file into a validated :class:`~scoremon.spec.model.Spec`.

Shape errors come from pydantic; we translate each into our own words, located at the key
to edit, with the nearest valid key suggested for a typo. The rules that span keys
(:mod:`scoremon.spec.checks`) run too: on the whole spec when its shape is right, and
otherwise on every feature, the grades, the reasons and the baseline that are right on
their own, so one problem never hides another.
"""
from __future__ import annotations

import re
import types
import typing
from pathlib import Path
from typing import Any

from pydantic import BaseModel, TypeAdapter, ValidationError

from ..errors import Problem, SpecError
from .checks import ValidParts, check_parts, check_spec, show_number, suggest
from .model import FEATURE_TYPES, Baseline, Feature, Grade, Reasons, Spec
from .source import SpecSource, format_path, read_spec_file, read_spec_text

FEATURE = TypeAdapter(Feature)
GRADES = TypeAdapter(list[Grade])
REASONS = TypeAdapter(Reasons)
BASELINE = TypeAdapter(Baseline)
WRITTEN_DATE = re.compile(r"\d{4}-\d{2}-\d{2}")


def load_spec(path: str | Path) -> Spec:
    """Read, parse and validate a spec file.

    >>> spec = load_spec("tests/fixtures/small.yaml")
    >>> spec.model.version
    '3'

    Raises :class:`~scoremon.errors.SpecError` listing every problem, ordered by line.
    """
    return validate_source(read_spec_file(path))


def parse_spec(text: str, file: str = "<spec>") -> Spec:
    """Parse and validate spec text (as :func:`load_spec`, without a file)."""
    return validate_source(read_spec_text(text, file))


def validate_source(source: SpecSource) -> Spec:
    """Validate parsed data; raise :class:`SpecError` with every problem found."""
    if not isinstance(source.data, dict):
        raise SpecError(source.problems + [source.problem((), f"the top level is {_describe(source.data)}, not a "
                                                              "mapping; start the file with keys such as `model:` "
                                                              "and `features:`")])
    problems = list(source.problems)  # a key given twice: its first value is validated below
    try:
        spec = Spec.model_validate(source.data)
    except ValidationError as error:
        problems += _translate(error, source) + check_parts(_valid_parts(source.data), source)
        raise SpecError(problems) from None
    problems += check_spec(spec, source)
    if problems:
        raise SpecError(problems)
    return spec


def _valid_parts(data: dict) -> ValidParts:
    """The parts of a spec with shape problems that are right on their own."""
    features = data["features"] if isinstance(data.get("features"), list) else None
    valid = {}
    for position, feature in enumerate(features or []):
        try:
            valid[position] = FEATURE.validate_python(feature)
        except ValidationError:
            pass  # its shape problems are already reported
    names = None if features is None else tuple(_name_of(feature) for feature in features)
    return ValidParts(valid, names, _valid(GRADES, data, "grades"), _valid(REASONS, data, "reasons"),
                      _valid(BASELINE, data, "baseline"))


def _name_of(feature: Any) -> str | None:
    name = feature.get("name") if isinstance(feature, dict) else None
    return name if isinstance(name, str) else None


def _valid(adapter: TypeAdapter, data: dict, key: str) -> Any:
    if key not in data:
        return None  # absent: reported as missing if required; an absent optional part has no rules
    try:
        value = adapter.validate_python(data[key])
    except ValidationError:
        return None
    return tuple(value) if isinstance(value, list) else value


def _translate(error: ValidationError, source: SpecSource) -> list[Problem]:
    problems = []
    for item in error.errors(include_url=False):
        loc = tuple(item["loc"])
        # pydantic puts a feature's type (its discriminator) into the location: features.2.numeric.bins
        tagged = len(loc) > 2 and loc[0] == "features" and loc[2] in FEATURE_TYPES
        path = loc[:2] + loc[3:] if tagged else loc
        problems.append(_problem(item, loc, path, source))
    return problems


def _problem(item: dict, loc: tuple, path: tuple, source: SpecSource) -> Problem:
    kind, given = item["type"], item.get("input")
    context = item.get("ctx") or {}
    shown = _shown(given, source.written(path))
    if given is None and kind in _EXPECTED:
        return source.problem(path, f"has no value; give {_EXPECTED[kind]}", at_value=True)
    if kind == "missing":
        return source.problem(path, f"required key is missing; add `{path[-1]}:` {_place(path[:-1])}")
    if kind == "extra_forbidden":
        known = _keys_at(loc[:-1])
        hint = suggest(path[-1], known) or f"; valid keys here: {', '.join(known)}"
        return source.problem(path, f"unknown key {path[-1]!r}{hint}")
    if kind == "union_tag_invalid":
        tag = source.written(path + ("type",)) or context.get("tag")
        hint = suggest(tag, FEATURE_TYPES) or f"; use one of {_choices(FEATURE_TYPES)}"
        return source.problem(path + ("type",), f"unknown feature type {tag!r}{hint}", at_value=True)
    if kind == "union_tag_not_found":
        return source.problem(path, f"the feature has no `type:`; add one of {_choices(FEATURE_TYPES)}")
    if kind == "literal_error":
        allowed = re.findall(r"'([^']*)'", context.get("expected", ""))
        hint = suggest(given, allowed) if isinstance(given, str) else ""
        if given is None:
            return source.problem(path, f"has no value; use {context.get('expected', '')}", at_value=True)
        return source.problem(path, f"{shown} is not allowed{hint or '; use ' + context.get('expected', '')}",
                              at_value=True)
    if kind in ("float_parsing", "float_type", "int_parsing", "int_type", "int_from_float"):
        noun = "a whole number" if kind.startswith("int") else "a number"
        return source.problem(path, f"expected {noun}, got {shown}", at_value=True)
    if kind == "finite_number":
        return source.problem(path, f"got {shown}; give a finite number (.inf, -.inf and .nan are not allowed here)",
                              at_value=True)
    if kind in _BOUNDS:
        word, key = _BOUNDS[kind]
        return source.problem(path, f"must be {word} {show_number(context[key])}, got {shown}", at_value=True)
    if kind in ("string_type", "text_type"):
        return source.problem(path, f"expected text, got {shown}; quote it", at_value=True)
    if kind == "string_too_short":
        return source.problem(path, "is empty; give a value", at_value=True)
    if kind == "too_short":
        return source.problem(path, "is empty; give at least one item", at_value=True)
    if kind == "list_type":
        return source.problem(path, f"expected a list (lines starting with '- '), got {shown}", at_value=True)
    if kind in ("model_type", "model_attributes_type", "dict_type"):
        return source.problem(path, f"expected a mapping of keys, got {shown}", at_value=True)
    if kind.startswith("date"):
        if isinstance(given, str) and WRITTEN_DATE.fullmatch(given):
            return source.problem(path, f"{given} is not a day of the calendar; give a date that exists, as YYYY-MM-DD",
                                  at_value=True)
        return source.problem(path, f"expected a date written YYYY-MM-DD, got {shown}", at_value=True)
    if kind == "category_type":
        return source.problem(path, f"category {shown} is neither text nor a whole number; quote it to make it text",
                              at_value=True)
    if kind == "edge_type":
        return source.problem(path, f"expected a number (or .inf / -.inf), got {shown}", at_value=True)
    return source.problem(path, item["msg"], at_value=True)


# What a key of each type expects, for a key written with no value (``pdo:`` or ``pdo: ~``).
_EXPECTED = {
    "float_type": "a number",
    "int_type": "a whole number",
    "string_type": "text",
    "text_type": "text",
    "list_type": "a list (lines starting with '- ')",
    "model_type": "a mapping of keys",
    "model_attributes_type": "a mapping of keys",
    "dict_type": "a mapping of keys",
    "date_type": "a date written YYYY-MM-DD",
    "edge_type": "a number (or .inf / -.inf)",
    "category_type": "text or a whole number",
}

_BOUNDS = {
    "greater_than": ("above", "gt"),
    "greater_than_equal": ("at least", "ge"),
    "less_than": ("below", "lt"),
    "less_than_equal": ("at most", "le"),
}


def _shown(given: Any, written: str | None) -> str:
    """A value in a message: as the file writes it, saying how YAML read it when that surprises."""
    if given is None or isinstance(given, bool):
        read = {None: "null", True: "true", False: "false"}[given]
        if not written:
            return "nothing" if given is None else read
        return read if written.lower() == read else f"{written} (YAML reads it as {read})"
    if isinstance(given, float):
        return show_number(given)
    if isinstance(given, dict):
        return "a mapping"
    if isinstance(given, list):
        return "a list"
    return repr(given)


def _place(parent: tuple) -> str:
    if not parent:
        return "at the top level"
    if isinstance(parent[-1], int):
        return f"to {format_path(parent)}"
    return f"under `{parent[-1]}:`"


def _choices(words) -> str:
    words = list(words)
    return ", ".join(words[:-1]) + " or " + words[-1]


def _keys_at(loc: tuple) -> list[str]:
    """The keys a mapping at ``loc`` (pydantic's location, tags included) may hold."""
    annotation = Spec
    for part in loc:
        annotation = _descend(annotation, part)
        if annotation is None:
            return []
    models = _models(annotation)
    return list(models[0].model_fields) if len(models) == 1 else []


def _descend(annotation, part):
    """The type one step down: a list's item, a model's field, a tagged union's member."""
    if isinstance(part, int):
        args = typing.get_args(_unwrap(annotation))
        return args[0] if args else None
    models = _models(annotation)
    if len(models) > 1:  # a tagged union: the part is the tag naming the member
        return next((m for m in models if typing.get_args(m.model_fields["type"].annotation) == (part,)), None)
    if models:
        field = models[0].model_fields.get(part)
        return field.annotation if field else None
    args = typing.get_args(_unwrap(annotation))
    return args[1] if len(args) == 2 else None  # dict[str, X]


def _unwrap(annotation):
    while typing.get_origin(annotation) is typing.Annotated:
        annotation = typing.get_args(annotation)[0]
    return annotation


def _models(annotation) -> list[type[BaseModel]]:
    """The pydantic models an annotation allows: one for a model or ``X | None``, several for a union."""
    annotation = _unwrap(annotation)
    members = [annotation]
    if typing.get_origin(annotation) in (typing.Union, types.UnionType):
        members = [_unwrap(a) for a in typing.get_args(annotation)]
    return [m for m in members if isinstance(m, type) and issubclass(m, BaseModel)]


def _describe(data: Any) -> str:
    if isinstance(data, list):
        return "a list"
    return f"the single value {data!r}"
