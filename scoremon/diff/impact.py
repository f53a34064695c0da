"""The impact of a model change on a population: one query that scores every row under both
versions, and the summary of its aggregates.

:func:`impact_query` builds the query as a sqlglot tree. Both versions score the *same row in
the same pass*: the old version's scoring query runs over the source and carries through the
columns the new version needs (under fresh names), and the new version's scoring query runs
over that. Each step only adds columns to the row it reads, so no key or join is needed to
line the two scores up, and the source is read once. Over the paired rows, window functions
give each row its position by score change and PD change (for exact quantiles) and its
average rank by old and by new score (for Spearman's rank correlation); one GROUP BY over
every key, then ``GROUPING SETS`` over its result, returns every aggregate the summary needs:

* ``()``                       totals, sums, order statistics, rank sums;
* ``(old_grade, new_grade)``   the grade migration matrix;
* ``(swap_cell)``              the swap set at the cut-off (when one is given);
* ``(old_reason, new_reason)`` first-reason changes;
* ``(score_band)``, ``(pd_band)`` histograms of the score change and the PD change.

Only those few rows reach Python; :func:`summarise_impact` turns them into an :class:`Impact`.

Portable choices: ``RANK() OVER``, ``ROW_NUMBER() OVER``, ``COUNT(*) OVER``, ``GROUPING SETS``
and ``GROUPING()`` run on DuckDB, PostgreSQL and Spark. Quantiles are taken from order
statistics (numpy's default "linear" rule) rather than ``PERCENTILE_CONT``, which sqlglot
renders as an approximate percentile on Spark. Ranks are centred on their known mean
(n + 1) / 2 before they are multiplied, so the rank sums stay small enough for doubles.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable, Mapping, Sequence

from sqlglot import exp

from ..compiler import compile_model, output_columns
from ..engines.protocol import BOOLEAN, Column
from ..errors import InputError
from ..exact import FixedPoint
from ..spec.model import Spec
from ..trees import INTERNAL, alias, as_double, case, column, identifier, integer, number, window

QUANTILES = (0.01, 0.05, 0.25, 0.5, 0.75, 0.95, 0.99)
# Score change bands in multiples of the new version's PDO (points to double the odds): the
# trade's own unit for "how much did the odds move".
SCORE_STEPS = (0.25, 0.5, 1.0, 2.0)
# PD change bands, as a share (0.005 = half a percentage point).
PD_STEPS = (0.005, 0.01, 0.02, 0.05, 0.10)
# A restated model can give the same score in slightly different bits; below these a row
# counts as unchanged.
UNCHANGED_POINTS = 1e-6
UNCHANGED_PD = 1e-9
SWAP_CELLS = ("accepted_by_both", "swap_in", "swap_out", "declined_by_both")
GROUPINGS = ("migration", "swap", "reason", "score_band", "pd_band", "score_change_pick", "pd_change_pick")


# ---------------------------------------------------------------- the result records

@dataclass(frozen=True)
class Band:
    """One bar of a histogram of changes: its words, its signed band number (0 is
    unchanged, larger numbers are larger rises, negative ones falls) and its rows."""

    label: str
    index: int
    rows: int
    share: float


@dataclass(frozen=True)
class ChangeDistribution:
    """How a quantity moved from the old version to the new one over the population."""

    mean: float
    minimum: float
    maximum: float
    quantiles: dict[str, float]
    bands: tuple[Band, ...]
    rows_up: int
    rows_unchanged: int
    rows_down: int


@dataclass(frozen=True)
class Migration:
    """Rows by old grade (rows of ``counts``) and new grade (columns), best grade first.

    ``is_same_grades`` is false when the two versions name different grades; then moving up
    or down compares positions in each version's own list.
    """

    old_grades: tuple[str, ...]
    new_grades: tuple[str, ...]
    counts: tuple[tuple[int, ...], ...]
    rows_up: int
    rows_same: int
    rows_down: int
    is_same_grades: bool


@dataclass(frozen=True)
class Cell:
    """One cell of the swap set, with the realised event rate where outcomes are known."""

    name: str
    rows: int
    share: float
    rows_with_outcome: int
    events: int
    event_rate: float | None


@dataclass(frozen=True)
class SwapSet:
    """Accept means score ≥ cut-off; each version has its own cut-off (usually the same)."""

    cutoff_old: float
    cutoff_new: float
    cells: tuple[Cell, ...]


@dataclass(frozen=True)
class ReasonShift:
    """How often the first reason given to a row changes, and the most frequent moves."""

    rows_changed: int
    share_changed: float
    top_moves: tuple[tuple[str | None, str | None, int], ...]


@dataclass(frozen=True)
class Impact:
    """What the change does to one population (see the module docstring)."""

    population: str
    outcome: str | None
    rows: int
    rows_with_outcome: int
    events: int
    mean_score_old: float
    mean_score_new: float
    mean_pd_old: float
    mean_pd_new: float
    score_change: ChangeDistribution
    pd_change: ChangeDistribution
    migration: Migration
    swap_set: SwapSet | None
    first_reason: ReasonShift
    spearman: float | None

    @property
    def event_rate(self) -> float | None:
        return self.events / self.rows_with_outcome if self.rows_with_outcome else None


# ---------------------------------------------------------------- the query

def _fresh(base: str, taken: set[str]) -> str:
    """``base``, or ``base_2``, ``base_3``… — the first not in ``taken`` (compared ignoring case)."""
    name, n = base, 1
    while name.casefold() in taken:
        n += 1
        name = f"{base}_{n}"
    taken.add(name.casefold())
    return name


PLACEHOLDER = f"{INTERNAL}rows"  # stands for a scoring query's source until the real one is put in


def _scoring_step(spec: Spec, source: exp.Subquery, prefix: str, keys: Sequence[str],
                  float_columns: Sequence[str], exact_columns: Mapping[str, FixedPoint] | None = None) -> exp.Select:
    """``spec``'s scoring query over ``source``, its steps (CTEs) renamed ``prefix + name``.

    The two scoring queries nest inside each other and both name their steps ``binned``,
    ``pointed``…; Spark refuses duplicate CTE names even in nested scopes. The query is
    compiled over a placeholder and ``source`` is put in afterwards: the compiler copies its
    source, and here the source holds the whole first scoring query; renaming before the
    source is in also leaves a table in the source called ``binned`` alone.
    """
    query = compile_model(spec, exp.Table(this=identifier(PLACEHOLDER)), keys=keys, float_columns=float_columns,
                          exact_columns=exact_columns)
    ctes = query.args["with_"].expressions
    names = {cte.alias: f"{prefix}{cte.alias}" for cte in ctes}
    for cte in ctes:
        cte.set("alias", exp.TableAlias(this=identifier(names[cte.alias])))
    placeholders = []
    for clause in list(query.find_all(exp.From)):
        target = clause.this
        if isinstance(target, exp.Identifier) and target.name in names:
            clause.set("this", identifier(names[target.name]))
        elif isinstance(target, exp.Table) and not target.args.get("db") and target.name in names:
            target.set("this", identifier(names[target.name]))
        elif isinstance(target, exp.Table) and target.name == PLACEHOLDER:
            placeholders.append(clause)
    if len(placeholders) != 1:
        raise RuntimeError(f"expected the scoring query to read its source once, found {len(placeholders)}")  # a bug
    placeholders[0].set("this", source)
    return query


def _over(columns: Sequence[exp.Expression], query: exp.Expression, name: str) -> exp.Select:
    """``SELECT columns FROM (query) AS name`` without copying ``query`` (it can be large)."""
    select = exp.Select(expressions=list(columns))
    select.set("from_", exp.From(this=exp.Subquery(this=query, alias=exp.TableAlias(this=identifier(name)))))
    return select


def _inputs(spec: Spec) -> list[str]:
    return list(dict.fromkeys(f.source_column for f in spec.features))


def impact_query(
    old: Spec,
    new: Spec,
    source: exp.Expression,
    float_columns: Iterable[str] = (),
    outcome: str | None = None,
    outcome_is_boolean: bool = False,
    cutoffs: tuple[float, float] | None = None,
    exact_columns: Mapping[str, FixedPoint] | None = None,
) -> exp.Select:
    """The one query that scores ``source`` under both versions and aggregates the pairs.

    ``float_columns`` names the source's FLOAT/DOUBLE columns (the others need no NaN test).
    ``outcome`` is an optional 0/1 (or boolean) column; NULL means not yet known, any other
    value is counted in ``invalid_outcomes``. ``cutoffs`` is (old cut-off, new cut-off).
    ``exact_columns`` gives the source's whole-number and DECIMAL columns, compared with bin
    edges exactly (:mod:`scoremon.exact`). The caller checks beforehand that the source has
    the columns both specs need.
    """
    floats = set(float_columns)
    inputs_old, inputs_new = _inputs(old), _inputs(new)
    taken = {name.casefold() for name in inputs_old + inputs_new + ([outcome] if outcome else [])}
    taken |= {name.casefold() for name in output_columns(old).all + output_columns(new).all}

    # step 0: the old version's inputs, plus everything later steps need under fresh names
    carried = list(dict.fromkeys(inputs_new + ([outcome] if outcome else [])))
    carry = {name: _fresh(f"carried_{i}", taken) for i, name in enumerate(carried, start=1)}
    step0 = exp.Select(expressions=[column(n) for n in inputs_old] + [alias(column(n), carry[n]) for n in carried])
    step0.set("from_", exp.From(this=source.copy()))

    # step 1: the old version scores each row and passes the carried columns through
    population = exp.Subquery(this=step0, alias=exp.TableAlias(this=identifier("population")))
    step1 = _scoring_step(old, population, f"{INTERNAL}old_", [carry[n] for n in carried],
                          [n for n in inputs_old if n in floats], exact_columns)
    old_names = {k: _fresh(f"old_{k}", taken) for k in ("score", "pd", "grade", "reason")}
    outcome_name = carry[outcome] if outcome else None
    old_reason = "reason_1" if output_columns(old).reasons else None

    # step 1b: the new version's inputs under their own names, and the old results
    step1b = _over([
        *[alias(column(carry[n]), n) for n in inputs_new],
        *([column(outcome_name)] if outcome else []),
        alias(column("score"), old_names["score"]), alias(column("pd"), old_names["pd"]),
        alias(column("grade"), old_names["grade"]),
        alias(column(old_reason) if old_reason else exp.Cast(this=exp.Null(), to=exp.DataType.build("VARCHAR")),
            old_names["reason"]),
    ], step1, "scored_old")

    # step 2: the new version scores the same row
    keys = [old_names["score"], old_names["pd"], old_names["grade"], old_names["reason"]]
    keys += [outcome_name] if outcome else []
    carried_rows = exp.Subquery(this=step1b, alias=exp.TableAlias(this=identifier("carried")))
    step2 = _scoring_step(new, carried_rows, f"{INTERNAL}new_", keys, [n for n in inputs_new if n in floats],
                          exact_columns)
    new_reason = "reason_1" if output_columns(new).reasons else None

    # paired: our own names from here on
    if outcome is None:
        # a typed NULL: a bare one is text to PostgreSQL once it leaves its subquery, and
        # SUM(outcome) below then fails ("function sum(text) does not exist")
        outcome_value, invalid = exp.Cast(this=exp.Null(), to=exp.DataType.build("INT")), integer(0)
    elif outcome_is_boolean:
        o = column(outcome_name)
        outcome_value = case([(o.copy(), integer(1)), (exp.Not(this=o.copy()), integer(0))], exp.Null())
        invalid = integer(0)
    else:
        o = column(outcome_name)
        outcome_value = case([(exp.EQ(this=o.copy(), expression=integer(1)), integer(1)),
                               (exp.EQ(this=o.copy(), expression=integer(0)), integer(0))], exp.Null())
        # NaN equals neither 0 nor 1, so it is counted here too
        invalid = case([(exp.and_(exp.Not(this=exp.Is(this=o.copy(), expression=exp.Null())),
                                   exp.Not(this=exp.paren(exp.or_(exp.EQ(this=o.copy(), expression=integer(0)),
                                                                  exp.EQ(this=o.copy(), expression=integer(1)))))),
                          integer(1))], integer(0))
    paired = _over([
        alias(column(old_names["score"]), "old_score"), alias(column("score"), "new_score"),
        alias(column(old_names["pd"]), "old_pd"), alias(column("pd"), "new_pd"),
        alias(column(old_names["grade"]), "old_grade"), alias(column("grade"), "new_grade"),
        alias(column(old_names["reason"]), "old_reason"),
        alias(column(new_reason) if new_reason else exp.Cast(this=exp.Null(), to=exp.DataType.build("VARCHAR")),
            "new_reason"),
        alias(outcome_value, "outcome"), alias(invalid, "invalid_outcome"),
        alias(column("score") - column(old_names["score"]), "score_change"),
        alias(column("pd") - column(old_names["pd"]), "pd_change"),
    ], step2, "scored_new")

    # ranked: bands, swap cell, positions and centred average ranks
    n_rows = as_double(window(exp.Count(this=exp.Star())))

    def centred_rank(name: str) -> exp.Expression:
        # The average rank of tied values is halfway between the first tie's rank (RANK) and
        # the last's: the count of rows up to and including the ties (COUNT with the default
        # frame, which takes in peers). Both use the same ordering, so engines sort once.
        # The mean of average ranks over all rows is (n + 1) / 2.
        first = as_double(window(exp.Anonymous(this="RANK"), order=name))
        last = as_double(window(exp.Count(this=exp.Star()), order=name))
        return exp.paren(first + last) / number(2.0) - exp.paren(n_rows.copy() + number(1.0)) / number(2.0)

    ranked_columns = [
        column(c) for c in ("old_score", "new_score", "old_pd", "new_pd", "old_grade", "new_grade", "old_reason",
                          "new_reason", "outcome", "invalid_outcome", "score_change", "pd_change")
    ]
    ranked_columns += [
        alias(_band(column("score_change"), [s * new.scaling.pdo for s in SCORE_STEPS], UNCHANGED_POINTS), "score_band"),
        alias(_band(column("pd_change"), list(PD_STEPS), UNCHANGED_PD), "pd_band"),
        alias(n_rows, "population_rows"),
        alias(window(exp.RowNumber(), order="score_change"), "score_change_position"),
        alias(window(exp.RowNumber(), order="pd_change"), "pd_change_position"),
        alias(centred_rank("old_score"), "old_rank"),
        alias(centred_rank("new_score"), "new_rank"),
    ]
    if cutoffs is not None:
        accepted_old = exp.GTE(this=column("old_score"), expression=number(cutoffs[0]))
        accepted_new = exp.GTE(this=column("new_score"), expression=number(cutoffs[1]))
        ranked_columns.append(alias(case([
            (exp.and_(accepted_old.copy(), accepted_new.copy()), exp.Literal.string("accepted_by_both")),
            (accepted_old.copy(), exp.Literal.string("swap_out")),
            (accepted_new.copy(), exp.Literal.string("swap_in")),
        ], exp.Literal.string("declined_by_both")), "swap_cell"))
    ranked = _over(ranked_columns, paired, "paired")

    # picked: the rows quantiles need (a step of its own: PostgreSQL cannot refer to a column
    # alias of the same SELECT)
    picks = [alias(_order_statistic_pick(f"{q}_position"), f"{q}_pick") for q in ("score_change", "pd_change")]
    picked = _over([exp.Star(), *picks], ranked, "ranked")

    # the aggregates, in two passes: one GROUP BY over every key at once (a single hash table
    # over the rows), then GROUPING SETS over that small result; summing the partial sums is
    # the same as summing the rows, and grouping the rows themselves by each set was as slow
    # again as scoring both versions.
    groups = {"migration": ("old_grade", "new_grade"), "swap": ("swap_cell",), "reason": ("old_reason", "new_reason"),
              "score_band": ("score_band",), "pd_band": ("pd_band",),
              "score_change_pick": ("score_change_pick",), "pd_change_pick": ("pd_change_pick",)}
    if cutoffs is None:
        del groups["swap"]
    keys = [name for names in groups.values() for name in names]
    partial = [  # (name, aggregate over rows, how partial results combine)
        ("rows", exp.Count(this=exp.Star()), exp.Sum),
        ("events", exp.Sum(this=column("outcome")), exp.Sum),
        ("rows_with_outcome", exp.Count(this=column("outcome")), exp.Sum),
        ("invalid_outcomes", exp.Sum(this=column("invalid_outcome")), exp.Sum),
        ("sum_score_change", exp.Sum(this=column("score_change")), exp.Sum),
        ("min_score_change", exp.Min(this=column("score_change")), exp.Min),
        ("max_score_change", exp.Max(this=column("score_change")), exp.Max),
        ("sum_pd_change", exp.Sum(this=column("pd_change")), exp.Sum),
        ("min_pd_change", exp.Min(this=column("pd_change")), exp.Min),
        ("max_pd_change", exp.Max(this=column("pd_change")), exp.Max),
        ("sum_old_score", exp.Sum(this=column("old_score")), exp.Sum),
        ("sum_new_score", exp.Sum(this=column("new_score")), exp.Sum),
        ("sum_old_pd", exp.Sum(this=column("old_pd")), exp.Sum),
        ("sum_new_pd", exp.Sum(this=column("new_pd")), exp.Sum),
        ("sum_rank_products", exp.Sum(this=column("old_rank") * column("new_rank")), exp.Sum),
        ("sum_old_rank_squares", exp.Sum(this=column("old_rank") * column("old_rank")), exp.Sum),
        ("sum_new_rank_squares", exp.Sum(this=column("new_rank") * column("new_rank")), exp.Sum),
    ]
    cells = _over([*[column(k) for k in keys], *[alias(e, n) for n, e, _ in partial]], picked, "picked")
    cells.set("group", exp.Group(expressions=[column(k) for k in keys]))

    selected: list[tuple[str, exp.Expression]] = [(k, column(k)) for k in keys]
    for grouping, names in groups.items():
        selected.append((f"grouping_{grouping}", exp.Grouping(expressions=[column(names[0])])))
    selected += [(n, combine(this=column(n))) for n, _, combine in partial]
    query = _over([alias(e, n) for n, e in selected], cells, "cells")
    sets = [exp.Tuple(expressions=[])] + [exp.Tuple(expressions=[column(n) for n in names]) for names in groups.values()]
    query.set("group", exp.Group(grouping_sets=[exp.GroupingSets(expressions=sets)]))
    return query


def _band(change: exp.Expression, steps: Sequence[float], unchanged: float) -> exp.Expression:
    """Signed band number: 0 unchanged, ±1 … ±len(steps)+1 by the size of the change."""
    size = exp.Abs(this=change.copy())
    branches = [(exp.LTE(this=size.copy(), expression=number(unchanged)), integer(0))]
    branches += [(exp.LT(this=size.copy(), expression=number(step)), integer(k)) for k, step in enumerate(steps, start=1)]
    magnitude = case(branches, integer(len(steps) + 1))
    return case([(exp.LT(this=change.copy(), expression=number(0.0)), exp.Neg(this=exp.paren(magnitude.copy())))],
                 magnitude)


def _order_statistic_pick(position: str) -> exp.Expression:
    """The row's position when a quantile needs it, else NULL.

    numpy's "linear" quantile q of n sorted values interpolates between the values at 1-based
    positions floor((n − 1)·q) + 1 and + 2; grouping by this column brings just those rows'
    values to Python (MIN of one value is that value).
    """
    wanted = []
    for q in QUANTILES:
        low = exp.Floor(this=exp.paren(column("population_rows") - number(1.0)) * number(q))
        for step in (1, 2):
            wanted.append(exp.EQ(this=column(position), expression=low.copy() + integer(step)))
    return case([(exp.or_(*wanted), column(position))], exp.Null())


def _q_name(q: float) -> str:
    return f"{round(q * 100):02d}"


# ---------------------------------------------------------------- the summary

def band_labels(steps: Sequence[float], unit: str, scale: float = 1.0, digits: int = 2) -> dict[int, str]:
    """Words for each signed band number of :func:`_band`, e.g. ``{0: "unchanged", 1: "0 to +5"}``."""
    def fmt(value: float) -> str:
        text = f"{value * scale:.{digits}f}".rstrip("0").rstrip(".")
        return text

    edges = [0.0] + [float(s) for s in steps]
    labels = {0: "unchanged"}
    for k in range(1, len(steps) + 2):
        if k <= len(steps):
            low, high = edges[k - 1], edges[k]
            labels[k] = f"+{fmt(low)} to +{fmt(high)}{unit}" if low else f"0 to +{fmt(high)}{unit}"
            labels[-k] = f"-{fmt(high)} to -{fmt(low)}{unit}" if low else f"-{fmt(high)} to 0{unit}"
        else:
            labels[k] = f"+{fmt(edges[-1])}{unit} or more"
            labels[-k] = f"-{fmt(edges[-1])}{unit} or more"
    return labels


def summarise_impact(
    rows: Sequence[Mapping],
    old: Spec,
    new: Spec,
    population: str,
    outcome: str | None = None,
    cutoffs: tuple[float, float] | None = None,
) -> Impact:
    """Turn the rows of :func:`impact_query` (named: mappings from column name to value) into an :class:`Impact`.

    Raises :class:`InputError` when the population is empty or the outcome column holds
    values other than 0, 1 and NULL.
    """
    records = list(rows)
    flags = [name for name in GROUPINGS if records and f"grouping_{name}" in records[0]]

    def of(grouping: str | None) -> list[Mapping]:
        wanted = [r for r in records if all(r[f"grouping_{g}"] == (0 if g == grouping else 1) for g in flags)]
        return wanted

    total = of(None)[0]
    n = int(total["rows"] or 0)  # an empty population has a total row with NULL sums
    if n == 0:
        raise InputError(f"{population}: the population has no rows; there is nothing to compare")
    if outcome and total["invalid_outcomes"]:
        raise InputError(f"{population}: outcome column {outcome!r} has {int(total['invalid_outcomes']):,} values "
                         "other than 0, 1 and empty (NULL); give a 0/1 column, with NULL where the outcome "
                         "is not yet known")

    def distribution(quantity: str, band_key: str, labels: dict[int, str]) -> ChangeDistribution:
        counts = {int(r[band_key]): int(r["rows"]) for r in of(band_key)}
        bands = tuple(Band(labels[k], k, counts.get(k, 0), counts.get(k, 0) / n) for k in sorted(labels))
        at = {int(r[f"{quantity}_pick"]): r[f"min_{quantity}"] for r in of(f"{quantity}_pick")
              if r[f"{quantity}_pick"] is not None}
        quantiles = {}
        for q in QUANTILES:
            h = (n - 1) * q
            low, fraction = math.floor(h), h - math.floor(h)
            value = at[low + 1]
            if fraction and low + 2 in at:
                value = value + fraction * (at[low + 2] - value)
            quantiles[f"p{_q_name(q)}"] = value
        return ChangeDistribution(
            mean=total[f"sum_{quantity}"] / n, minimum=total[f"min_{quantity}"], maximum=total[f"max_{quantity}"],
            quantiles=quantiles, bands=bands,
            rows_up=sum(b.rows for b in bands if b.index > 0), rows_unchanged=counts.get(0, 0),
            rows_down=sum(b.rows for b in bands if b.index < 0))

    pdo = new.scaling.pdo
    score_change = distribution("score_change", "score_band", band_labels([s * pdo for s in SCORE_STEPS], " points"))
    pd_change = distribution("pd_change", "pd_band", band_labels(PD_STEPS, " pp", scale=100))

    # grade migration, best grade first in each version
    old_grades = tuple(g.name for g in sorted(old.grades, key=lambda g: -g.lower))
    new_grades = tuple(g.name for g in sorted(new.grades, key=lambda g: -g.lower))
    cells = {(r["old_grade"], r["new_grade"]): int(r["rows"]) for r in of("migration")}
    counts = tuple(tuple(cells.get((a, b), 0) for b in new_grades) for a in old_grades)
    up = same = down = 0
    for i, a in enumerate(old_grades):
        for j, b in enumerate(new_grades):
            rows_here = counts[i][j]
            if j < i:
                up += rows_here
            elif j == i:
                same += rows_here
            else:
                down += rows_here
    migration = Migration(old_grades, new_grades, counts, up, same, down, old_grades == new_grades)

    swap_set = None
    if cutoffs is not None:
        by_cell = {r["swap_cell"]: r for r in of("swap")}
        swap_cells = []
        for name in SWAP_CELLS:
            r = by_cell.get(name)
            rows_here = int(r["rows"]) if r else 0
            known = int(r["rows_with_outcome"]) if r else 0
            events = int(r["events"] or 0) if r else 0
            swap_cells.append(Cell(name, rows_here, rows_here / n, known, events, events / known if known else None))
        swap_set = SwapSet(cutoffs[0], cutoffs[1], tuple(swap_cells))

    moves = [(r["old_reason"], r["new_reason"], int(r["rows"])) for r in of("reason")]
    changed = [m for m in moves if m[0] != m[1]]
    rows_changed = sum(m[2] for m in changed)
    top = tuple(sorted(changed, key=lambda m: (-m[2], str(m[0]), str(m[1])))[:5])
    first_reason = ReasonShift(rows_changed, rows_changed / n, top)

    products, old_squares, new_squares = (total["sum_rank_products"], total["sum_old_rank_squares"],
                                          total["sum_new_rank_squares"])
    spearman = products / math.sqrt(old_squares * new_squares) if old_squares > 0 and new_squares > 0 else None

    return Impact(
        population=population, outcome=outcome, rows=n,
        rows_with_outcome=int(total["rows_with_outcome"]), events=int(total["events"] or 0),
        mean_score_old=total["sum_old_score"] / n, mean_score_new=total["sum_new_score"] / n,
        mean_pd_old=total["sum_old_pd"] / n, mean_pd_new=total["sum_new_pd"] / n,
        score_change=score_change, pd_change=pd_change, migration=migration, swap_set=swap_set,
        first_reason=first_reason, spearman=spearman,
    )


def check_outcome_type(outcome: str, columns: Mapping[str, Column]) -> bool:
    """True when the outcome column is boolean; raises :class:`InputError` when it is missing or not 0/1-able."""
    found = columns.get(outcome)
    if found is None:
        raise InputError(f"outcome column {outcome!r} is not in the input; name a 0/1 column with --outcome")
    if found.kind == BOOLEAN:
        return True
    if not found.is_number:
        raise InputError(f"outcome column {outcome!r} is {found.type_name}; it must hold 0/1 (or true/false), "
                         "with NULL where the outcome is not yet known")
    return False
