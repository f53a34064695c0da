"""The impact of a model change on a population, measured inside an engine.

:func:`measure_impact` checks the population's columns against both versions, runs the one
query of :func:`~scoremon.diff.impact.impact_query` and summarises its few rows into an
:class:`~scoremon.diff.impact.Impact`.
"""
from __future__ import annotations

from sqlglot import exp

from ..engines import Engine, Progress
from ..errors import InputError
from ..exact import exact_columns
from ..sources import check_columns, describe_source, float_columns, spec_columns
from ..spec.model import Spec
from .impact import Impact, check_outcome_type, impact_query, summarise_impact


def measure_impact(
    old: Spec,
    new: Spec,
    engine: Engine,
    source: exp.Expression,
    population: str = "",
    outcome: str | None = None,
    cutoff: float | None = None,
    new_cutoff: float | None = None,
    progress: Progress | None = None,
) -> Impact:
    """Score ``source`` under both versions in one query inside ``engine`` and summarise the move.

    ``outcome`` names an optional 0/1 column (NULL: not yet known); ``cutoff`` is the score at
    or above which a row is accepted (``new_cutoff`` for the new version, default the same).
    Only aggregates leave the engine. Raises :class:`InputError` listing every column either
    version needs and the input lacks, and for an empty population or a bad outcome column.

    >>> from scoremon.engines import open_engine
    >>> from scoremon.sources import source_relation
    >>> from scoremon.spec import load_spec
    >>> engine = open_engine()
    >>> spec = load_spec("tests/fixtures/small.yaml")
    >>> from scoremon.trees import alias, number, text
    >>> engine.write_table(exp.select(alias(number(30), "age"), alias(text("N1"), "region_code"),
    ...                               alias(number(0.5), "utilisation")), ["book"], "demo")
    >>> measure_impact(spec, spec, engine, source_relation(table="book")).score_change.rows_unchanged
    1
    """
    if new_cutoff is not None and cutoff is None:
        raise InputError("a cut-off for the new version needs one for the old version too; give --cutoff")
    columns = describe_source(engine, source, spec_columns(old) + spec_columns(new) + ([outcome] if outcome else []))
    problems = []
    for side, spec in (("old", old), ("new", new)):
        problems += [f"{side} version: {p}" for p in check_columns(spec, columns, ())]
    outcome_is_boolean = False
    if outcome is not None:
        try:
            outcome_is_boolean = check_outcome_type(outcome, columns)
        except InputError as error:
            problems.append(error.message)
    if problems:
        raise InputError("the input does not fit the specs", problems)
    cutoffs = None if cutoff is None else (float(cutoff), float(cutoff if new_cutoff is None else new_cutoff))
    query = impact_query(old, new, source, float_columns(columns), outcome, outcome_is_boolean, cutoffs,
                         exact_columns(columns))
    rows = engine.query(query, "scoring the population under both versions", progress)
    return summarise_impact(rows, old, new, population, outcome, cutoffs)
