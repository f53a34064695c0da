"""Turning a parsed spec file into a validated :class:`~scoremon.spec.model.Spec`.

Shape errors come from pydantic; we translate each into our own words, located at the key
to edit, with the nearest valid key suggested for a typo. Whole-model checks follow.
"""
from __future__ import annotations

import typing
from pathlib import Path

from pydantic import BaseModel, ValidationError

from ..errors import Problem, SpecError
from .checks import check_spec, suggest
from .model import FEATURE_TYPES, Spec
from .source import SpecSource, read_spec_file, read_spec_text


def load_spec(path: str | Path) -> Spec:
    """Read, parse and validate a spec file.

    >>> spec = load_spec("demo_warehouse/spec_v1.yaml")
    >>> spec.model.version
    '1'

    Raises :class:`~scoremon.errors.SpecError` listing every problem, ordered by line.
    """
    return validate_source(read_spec_file(path))


def parse_spec(text: str, file: str = "<spec>") -> Spec:
    """Parse and validate spec text (as :func:`load_spec`, without a file)."""
    return validate_source(read_spec_text(text, file))


def validate_source(source: SpecSource) -> Spec:
    """Validate parsed data; raise :class:`SpecError` with every problem found."""
    if not isinstance(source.data, dict):
        raise SpecError([source.problem((), "the top level must be a mapping of keys (model:, intercept:, ...)")])
    try:
        spec = Spec.model_validate(source.data)
    except ValidationError as error:
        raise SpecError(_translate(error, source)) from None
    problems = check_spec(spec, source)
    if problems:
        raise SpecError(problems)
    return spec


def _translate(error: ValidationError, source: SpecSource) -> list[Problem]:
    problems = []
    for item in error.errors(include_url=False):
        loc = tuple(item["loc"])
        path = tuple(p for p in loc if not _is_tag(p, loc))
        problems.append(_problem(item, loc, path, source))
    return problems


def _is_tag(part, loc) -> bool:
    # pydantic puts the discriminator's value into the location of a feature's errors
    return isinstance(part, str) and part in FEATURE_TYPES and loc[: loc.index(part)][:1] == ("features",)


def _problem(item: dict, loc: tuple, path: tuple, source: SpecSource) -> Problem:
    kind, given = item["type"], item.get("input")
    context = item.get("ctx") or {}
    if kind == "missing":
        return source.problem(path, f"required key is missing; add `{path[-1]}:` here")
    if kind == "extra_forbidden":
        known = _keys_at(loc[:-1])
        hint = suggest(path[-1], known) or f"; valid keys here: {', '.join(known)}"
        return source.problem(path, f"unknown key {path[-1]!r}{hint}")
    if kind == "union_tag_invalid":
        return source.problem(path + ("type",), f"type {context.get('tag')!r} is not a feature type"
                                                f"{suggest(context.get('tag'), FEATURE_TYPES)} "
                                                f"(use one of {', '.join(FEATURE_TYPES)})", at_value=True)
    if kind == "union_tag_not_found":
        return source.problem(path, f"the feature has no `type:`; add one of {', '.join(FEATURE_TYPES)}")
    if kind == "literal_error":
        return source.problem(path, f"{given!r} is not allowed; use {context.get('expected')}", at_value=True)
    if kind in ("float_parsing", "float_type", "int_parsing", "int_type", "int_from_float"):
        noun = "a whole number" if kind.startswith("int") else "a number"
        return source.problem(path, f"expected {noun}, got {given!r}", at_value=True)
    if kind == "finite_number":
        return source.problem(path, "must be a finite number, not .inf or .nan", at_value=True)
    if kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        return source.problem(path, f"{given!r} is out of range: {item['msg'].lower().replace('input', 'it')}", at_value=True)
    if kind in ("string_type", "text_type"):
        return source.problem(path, f"expected text, got {given!r}; quote it", at_value=True)
    if kind in ("string_too_short", "too_short"):
        return source.problem(path, "is empty; give at least one item" if kind == "too_short" else "is empty; give a value", at_value=True)
    if kind in ("list_type",):
        return source.problem(path, f"expected a list (lines starting with '- '), got {given!r}", at_value=True)
    if kind in ("model_type", "model_attributes_type", "dict_type"):
        return source.problem(path, f"expected a mapping of keys, got {given!r}", at_value=True)
    if kind.startswith("date"):
        return source.problem(path, f"expected a date written YYYY-MM-DD, got {given!r}", at_value=True)
    return source.problem(path, item["msg"], at_value=True)


def _keys_at(loc: tuple) -> list[str]:
    """The keys a mapping at ``loc`` (pydantic's location, tags included) may hold."""
    annotation = Spec
    for part in loc:
        annotation = _descend(annotation, part)
        if annotation is None:
            return []
    model = _model_of(annotation)
    return list(model.model_fields) if model else []


def _descend(annotation, part):
    model = _model_of(annotation)
    if isinstance(part, int):
        args = typing.get_args(_unwrap(annotation))
        return args[0] if args else None
    if model is not None:
        field = model.model_fields.get(part)
        return field.annotation if field else None
    for member in _members(annotation):  # a tagged union: part names the member
        member_model = _model_of(member)
        if member_model and typing.get_args(member_model.model_fields["type"].annotation) == (part,):
            return member_model
    args = typing.get_args(_unwrap(annotation))
    return args[1] if len(args) == 2 else None  # dict[str, X]


def _unwrap(annotation):
    while typing.get_origin(annotation) is typing.Annotated:
        annotation = typing.get_args(annotation)[0]
    return annotation


def _members(annotation) -> tuple:
    annotation = _unwrap(annotation)
    if typing.get_origin(annotation) in (typing.Union, getattr(__import__("types"), "UnionType", None)):
        return tuple(_unwrap(a) for a in typing.get_args(annotation))
    return (annotation,)


def _model_of(annotation):
    for member in _members(annotation):
        if isinstance(member, type) and issubclass(member, BaseModel):
            return member
    return None
