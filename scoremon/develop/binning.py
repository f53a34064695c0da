"""The `bin` step end to end: checks → fine classes → coarse classes → a :class:`Binning`;
and the recount of a hand-edited binning file.

:func:`bin_table` checks the columns and rows (:mod:`.outcome`), counts fine classes in the
engine (:mod:`.fine`) and merges them (:mod:`.coarse`). :func:`recount_table` takes the bins of
an edited file exactly as written and counts them again: the file's features become a spec
(coefficient 1), the spec is compiled by the scoring compiler, and one grouped pass counts each
feature's ``<feature>_bin`` labels — so a bin is counted exactly as scoring will find it (a
file too wide for one query is counted in several, :mod:`.width`).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

from sqlglot import exp

from ..compiler import compile_model
from ..engines import Engine
from ..engines.protocol import INTEGER, TEXT
from ..errors import InputError
from ..spec.model import Grade, Identity, Reasons, Scaling, Spec
from ..spec.checks import suggest
from ..trees import alias, column, identifier
from .binning_file import Binning, BinnedFeature, Settings, bin_labels, with_counts
from .coarse import categorical_groups, numeric_bins
from .fine import fine_classes
from .outcome import NUMBER_KINDS, ColumnPlan, check_rows, describe_columns, event_expression, plan_columns
from .width import cut

Progress = Callable[[float], None]


@dataclass(frozen=True)
class BinReport:
    """A binning and what a reviewer should hear about it."""

    binning: Binning
    notes: dict[str, tuple[str, ...]]  # per feature name (features left out included)
    left_out: tuple[tuple[str, str], ...]  # (column, why) never binned
    recounted_from: str | None = None


def bin_table(engine: Engine, source: exp.Expression, table: str, outcome: str, key: str | None = None,
              month_column: str | None = None, features: Sequence[str] | None = None, exclude: Sequence[str] = (),
              settings: Settings = Settings(), progress: Progress | None = None,
              categorical: Sequence[str] = ()) -> BinReport:
    """Bin every characteristic of the development table ``source`` (named ``table``).

    ``categorical`` names whole-number columns to bin as categories (codes). Raises
    :class:`InputError` (before any counting) for a missing column or a bad outcome, key or
    month; see :mod:`.outcome`.
    """
    plan = plan_columns(describe_columns(engine, source), table, outcome, key, month_column, features, exclude,
                        categorical)
    facts = check_rows(engine, source, plan, table)
    event = event_expression(plan.outcome)
    fine = fine_classes(engine, source, plan.numeric, plan.categorical, event, settings.fine_classes, progress)
    binned: list[BinnedFeature] = []
    notes: dict[str, tuple[str, ...]] = {}
    for classes in fine:
        if classes.name in plan.numeric:
            coarse = numeric_bins(classes, facts.rows, facts.events, settings)
        else:
            coarse = categorical_groups(classes, facts.rows, facts.events, settings)
        name = plan.feature_name(classes.name)
        notes[name] = coarse.notes
        if coarse.binned is not None:
            found = coarse.binned
            if name != classes.name:
                found = BinnedFeature(found.feature.model_copy(update={"name": name, "column": classes.name}),
                                      found.iv, found.counts)
            binned.append(found)
    if not binned:
        raise InputError(f"table {table}: every characteristic is missing on every row; nothing to bin")
    binning = Binning(table=table, engine=engine.dialect, outcome=outcome, rows=facts.rows, events=facts.events,
                      settings=settings, features=tuple(binned), key=key, month_column=month_column,
                      months=facts.months)
    return BinReport(binning, notes, plan.left_out)


def recount_table(engine: Engine, source: exp.Expression, table: str, edited: Binning, outcome: str | None = None,
                  key: str | None = None, month_column: str | None = None,
                  progress: Progress | None = None) -> BinReport:
    """The bins of ``edited`` as written, counted on ``source``: rows, events, WoE and IV anew.

    ``outcome``, ``key`` and ``month_column`` default to the file's. Raises :class:`InputError`
    for a column that is missing or of the wrong kind.
    """
    outcome = outcome or edited.outcome
    key = key if key is not None else edited.key
    month_column = month_column if month_column is not None else edited.month_column
    columns = describe_columns(engine, source)
    names = [b.feature.column or b.name for b in edited.features]
    for binned, name in zip(edited.features, names):
        if name not in columns:
            raise InputError(f"column {name!r} (feature {binned.name!r} of {edited.file or 'the binning file'}) is "
                             f"not in table {table}{suggest(name, list(columns))}")
        if binned.feature.type == "numeric":
            wanted, noun = NUMBER_KINDS, "a number"
        elif any(isinstance(v, int) for g in binned.feature.groups for v in g.values):
            wanted, noun = (INTEGER,), "whole numbers (its categories are)"
        else:
            wanted, noun = (TEXT,), "text"
        if columns[name].kind not in wanted:
            raise InputError(f"column {name!r} (feature {binned.name!r}) is {columns[name].type_name}; a "
                             f"{binned.feature.type} feature needs {noun}")
    plan = plan_columns(columns, table, outcome, key, month_column, features=names)
    facts = check_rows(engine, source, plan, table)
    counted = count_bins(engine, source, edited.features, plan)
    if progress:
        progress(1.0)
    binned = [with_counts(b.feature, [counted[(b.name, label)] for label in bin_labels(b.feature)], facts.rows,
                          facts.events) for b in edited.features]
    binning = Binning(table=table, engine=engine.dialect, outcome=outcome, rows=facts.rows, events=facts.events,
                      settings=edited.settings, features=tuple(binned), key=key, month_column=month_column,
                      months=facts.months)
    notes = {b.name: _small_bins(b, binning) for b in binned}
    return BinReport(binning, notes, (), edited.file)


def _small_bins(binned: BinnedFeature, binning: Binning) -> tuple[str, ...]:
    """Bins an edit left under the minimum share or events (missing and catch-all aside)."""
    settings = binning.settings
    small = [c.label for c in binned.inner_counts if c.rows < settings.min_share * binning.rows or c.events < settings.min_events]
    if not small:
        return ()
    return (f"under {settings.min_share:.0%} of rows or {settings.min_events} events: {', '.join(small)}",)


def count_query(source: exp.Expression, features: Sequence[BinnedFeature], plan: ColumnPlan) -> exp.Select:
    """Rows and events per ``<feature>_bin`` label of each of ``features`` as the scoring query
    finds it, in one grouped pass (one grouping set per feature)."""
    spec = Spec(model=Identity(name="recount", version="1", owner="scoremon bin", effective_date="2000-01-01",
                               intended_use="counting bins", event="outcome", performance_window_months=1),
                intercept=0.0, scaling=Scaling(base_score=600.0, base_odds=50.0, pdo=20.0),
                features=[b.spec_feature(1.0) for b in features],
                grades=[Grade(name="all", lower=float("-inf"), upper=float("inf"))],
                reasons=Reasons(count=0, statements=[]))
    scored = compile_model(spec, source, [plan.outcome.name])
    relation = exp.Subquery(this=scored, alias=exp.TableAlias(this=identifier("binned")))
    bins = [column(f"{b.name}_bin") for b in features]
    event = event_expression(plan.outcome)
    return (exp.select(*[c.copy() for c in bins], alias(exp.Count(this=exp.Star()), "rows"),
                       alias(exp.Sum(this=event), "events"))
            .from_(relation)
            .group_by(exp.GroupingSets(expressions=[exp.Tuple(expressions=[c.copy()]) for c in bins])))


def count_bins(engine: Engine, source: exp.Expression, features: Sequence[BinnedFeature],
               plan: ColumnPlan) -> dict[tuple[str, str], tuple[int, int]]:
    """(feature, bin label) → (rows, events), every bin of every feature (0 where empty): one
    pass, or as many as keep each query within :data:`~scoremon.develop.width.MAX_COLUMNS`
    (the scoring query lists about two columns a feature)."""
    counts = {(b.name, label): (0, 0) for b in features for label in bin_labels(b.feature)}
    for run, query in cut(list(features), lambda run: count_query(source, run, plan)):
        for row in engine.query(query, "counting the edited bins"):
            for b in run:
                label = row[f"{b.name}_bin"]
                if label is not None:
                    counts[(b.name, label)] = (int(row["rows"]), int(row["events"] or 0))
                    break
    return counts

