"""A validated spec becomes an engine-neutral sqlglot tree that scores every row.

Nothing here writes SQL text: the tree is rendered by :mod:`scoremon.dialects`. Every name
from a spec or a table becomes a quoted identifier and every value a literal, so no text
from the user reaches SQL as code.

The query reads the source once and runs through four steps (CTEs):

``binned``   finds each row's bin with a CASE per feature (the half-open comparisons in
             edge order first, the tests for NULL, NaN and an infinity the spec sends away
             from its outer bin after them, see :func:`_numeric_bin`). Where a bin's points
             and log-odds follow from one number (:func:`_one_number`: no rounding per bin)
             two such CASEs yield the bin's label and that number; otherwise one yields the
             bin number. A linear feature gets its bin number and clipped value;
``pointed``  labels, points and contributions to η (from the number, or looked up by bin
             number), and η = intercept + Σ contributions;
``totalled`` the score (base points + Σ points, rounded as the spec says) and, per reason
             statement, its shortfall = reference − points of its features, held as a whole
             number of billionths of a point (:data:`~scoremon.spec.terms.SHORTFALL_UNITS`), so
             that shortfalls apart only in a double's last bits tie;
``best_k`` / ``picked_k``, for each reason slot k = 1..N: the largest shortfall not yet
             picked (GREATEST over the shortfalls, with those picked for slots 1..k−1 set
             to 0), then the first statement in declaration order holding it — so ties go
             to the statement declared first, and a slot is NULL once no positive
             shortfall is left;
then the final SELECT adds PD = 1 / (1 + e^(−η)) with η clamped to ±700 (EXP overflows to an
error on PostgreSQL) — η itself, or with ``pd_from: score`` the η the score stands for,
(offset − score) / factor — the grade, reason 1..N (the picked statements' codes) and the model's
identity.

Portable choices, and why:
* NaN is tested with ``x = CAST('NaN' AS DOUBLE)``: DuckDB, PostgreSQL and Spark all treat
  NaN as equal to itself and larger than every number, so an untested NaN would fall into
  the top bin.
* Every number is ``CAST(<literal> AS DOUBLE)``: a bare ``0.1`` is DECIMAL on DuckDB and Spark,
  and sums of DECIMALs would not give the same bits as double arithmetic.
* Rounding is FLOOR and exact comparisons in doubles (:func:`round_half_away_sql`): ROUND on a
  double rounds half to even on PostgreSQL and half away from zero on DuckDB, and a DECIMAL
  cast is not exact on DuckDB.
* Reasons take successive maxima rather than ranking every pair of statements: with ten
  statements the pairwise ranks cost 90 comparisons per row and made reasons twice as
  expensive as the score itself (``scoremon bench``); N maxima cost about N·S. GREATEST is
  safe here because no shortfall is ever NULL (engines differ only on NULL arguments), and it
  returns one of its arguments exactly, so the equality test that finds the statement is exact.
"""
from __future__ import annotations

import math
import struct
from dataclasses import dataclass
from typing import Iterable, Mapping, Sequence

from sqlglot import exp

from .errors import InputError
from .exact import FixedPoint, exact_test, literal_text
from .spec.canonical import fingerprint
from .spec.model import CategoricalFeature, LinearFeature, NumericFeature, Spec
from .spec.terms import (
    HOLD_FLOOR_SIZE,
    HOLD_RELATIVE,
    SHORTFALL_UNITS,
    WHOLE_FROM,
    FeatureTerms,
    base_points,
    feature_terms,
    linear_points_slope,
    linear_slope,
    numeric_bins_in_order,
    special_routes,
    statement_reference,
)
from .trees import INTERNAL, by_bin, case, category_literal, column, double_constant, identifier, integer, number, text, total

ETA_CLAMP = 700.0  # e^700 is finite in double precision; e^710 is not
LINEAR_LOW, LINEAR_IN, LINEAR_HIGH, LINEAR_MISSING = 0, 1, 2, 3
LOG_ODDS, POINTS = "log_odds", "points"  # see _one_number


# ---------------------------------------------------------------- rounding

def round_half_away_sql(value: exp.Expression) -> exp.Expression:
    """:func:`scoremon.spec.terms.round_half_away` in double arithmetic, the same on every engine.

    Below 2**52 a double splits exactly into ``whole = FLOOR(|x|)`` and ``|x| − whole``; the
    value goes up when ``0.5 − (|x| − whole) <= hold``, with ``hold = max(|x|, 128) · 2**-48``.
    Each step is exact, so the test is the definition's exact comparison: the fraction is a
    double in [0, 1), ``0.5 − fraction`` is exact from a fraction of 0.25 up (Sterbenz) and
    above 0.25 (beyond any hold) below it, and scaling by a power of two is exact. From 2**52
    on every double is whole already. No DECIMAL: DuckDB converts a double to DECIMAL by a
    multiplication in floating point, and a DECIMAL(38, 12) cannot hold 1e26. ``0 − rounded``
    for negatives gives +0.0, not −0.0.
    """
    size = exp.Abs(this=value.copy())
    # Spark's FLOOR of a double is a BIGINT: back to DOUBLE (exact below 2**52)
    whole = exp.Cast(this=exp.Floor(this=size.copy()), to=exp.DataType.build("DOUBLE"))
    # a CASE, not GREATEST: engines differ on GREATEST with NULL
    hold = case([(exp.LT(this=size.copy(), expression=number(HOLD_FLOOR_SIZE)),
                  number(HOLD_FLOOR_SIZE * HOLD_RELATIVE))],
                exp.Mul(this=size.copy(), expression=number(HOLD_RELATIVE)))
    short_of_half = exp.Sub(this=number(0.5), expression=exp.paren(exp.Sub(this=size.copy(), expression=whole.copy()), copy=False))
    goes_up = exp.LTE(this=short_of_half, expression=hold)
    rounded = case([(goes_up, exp.Add(this=whole.copy(), expression=number(1.0)))], whole.copy())
    return case([
        (exp.GTE(this=size.copy(), expression=number(WHOLE_FROM)), value.copy()),
        (exp.LT(this=value.copy(), expression=number(0.0)), exp.Sub(this=number(0.0), expression=rounded.copy())),
    ], rounded)


# ---------------------------------------------------------------- output names

@dataclass(frozen=True)
class OutputColumns:
    """Names of the scored output's columns, in order."""

    keys: tuple[str, ...]
    features: tuple[tuple[str, str], ...]  # (bin column, points column) per feature
    reasons: tuple[str, ...]
    reason_texts: tuple[str, ...] = ()  # reason_k_text beside each reason_k, when asked for

    FIXED = ("score", "pd", "grade")
    IDENTITY = ("model_name", "model_version", "model_fingerprint")

    @property
    def all(self) -> tuple[str, ...]:
        flat = [name for pair in self.features for name in pair]
        reasons = [name for pair in zip(self.reasons, self.reason_texts) for name in pair] if self.reason_texts \
            else list(self.reasons)
        return self.keys + tuple(flat) + self.FIXED + tuple(reasons) + self.IDENTITY


def output_columns(spec: Spec, keys: Sequence[str] = (), reason_text: bool = False) -> OutputColumns:
    """The output column names for ``spec``; raises :class:`InputError` if a key collides.
    ``reason_text`` adds ``reason_k_text`` (the statement's text) beside each ``reason_k``."""
    features = tuple((f"{f.name}_bin", f"{f.name}_points") for f in spec.features)
    reasons = tuple(f"reason_{k}" for k in range(1, min(spec.reasons.count, len(spec.reasons.statements)) + 1))
    columns = OutputColumns(tuple(keys), features, reasons, tuple(f"{r}_text" for r in reasons) if reason_text else ())
    seen: dict[str, str] = {}
    for name in columns.all:
        folded = name.casefold()
        if folded in seen:
            raise InputError(f"output column {name!r} would appear twice (key columns and scored columns share "
                             "one namespace, compared ignoring case); rename or drop the key column")
        seen[folded] = name
    for key in keys:
        if key.startswith(INTERNAL):
            raise InputError(f"key column {key!r} uses the prefix {INTERNAL!r} reserved by scoremon; rename it")
    return columns


# ---------------------------------------------------------------- the scoring query

def compile_model(
    spec: Spec,
    source: exp.Expression,
    keys: Sequence[str] = (),
    float_columns: Iterable[str] | None = None,
    exact_columns: Mapping[str, FixedPoint] | None = None,
    reason_text: bool = False,
) -> exp.Select:
    """The scoring query for ``spec`` over ``source`` as an engine-neutral sqlglot tree.

    ``source`` is anything that can stand in FROM (a table, a table function). ``keys`` are
    passed through to the output first. ``float_columns`` names the input columns that can
    hold NaN or ±inf (FLOAT/DOUBLE); when given, the NaN and infinity tests are left out for
    the others, which cannot hold such values. ``None`` means every column may.

    >>> from scoremon.spec import load_spec
    >>> from scoremon.dialects import render_sql
    >>> spec = load_spec("tests/fixtures/small.yaml")
    >>> sql = render_sql(compile_model(spec, exp.to_table("applications")), "duckdb")
    >>> sql.startswith("WITH")
    True
    """
    names = output_columns(spec, keys, reason_text)
    floats = None if float_columns is None else set(float_columns)
    exact = dict(exact_columns or {})
    terms = [feature_terms(spec, f) for f in spec.features]
    fp = fingerprint(spec)

    bin_col = [f"{INTERNAL}bin_{i}" for i in range(len(spec.features))]
    value_col = [f"{INTERNAL}value_{i}" for i in range(len(spec.features))]
    short_col = [f"{INTERNAL}shortfall_{r}" for r in range(len(spec.reasons.statements))]
    eta = f"{INTERNAL}eta"
    key_cols = [column(k) for k in keys]

    # binned: per feature its label and the one number its points and η follow from, or else
    # its bin number; a linear feature's bin number and clipped value
    follows = [None if isinstance(f, LinearFeature) else _one_number(spec, t) for f, t in zip(spec.features, terms)]
    binned = [c.copy() for c in key_cols]
    for i, feature in enumerate(spec.features):
        source_column = feature.source_column
        x = column(source_column)
        may_be_odd = floats is None or source_column in floats
        kind = exact.get(source_column)
        if isinstance(feature, LinearFeature):
            binned.append(exp.alias_(_linear_bin(feature, x, may_be_odd), bin_col[i], quoted=True))
            binned.append(exp.alias_(_linear_value(feature, x), value_col[i], quoted=True))
        elif follows[i] is None:
            numbers = [integer(b) for b in range(len(terms[i].bins))]
            binned.append(exp.alias_(_bin_choice(feature, terms[i], x, may_be_odd, numbers, kind), bin_col[i], quoted=True))
        else:
            labels = [text(t.label) for t in terms[i].bins]
            values = [number(t.log_odds if follows[i] == LOG_ODDS else t.points) for t in terms[i].bins]
            binned.append(exp.alias_(_bin_choice(feature, terms[i], x, may_be_odd, labels, kind), names.features[i][0], quoted=True))
            binned.append(exp.alias_(_bin_choice(feature, terms[i], x, may_be_odd, values, kind), value_col[i], quoted=True))
    binned_query = exp.select(*binned).from_(source.copy())

    # pointed: labels, points and η
    pointed = [c.copy() for c in key_cols]
    contributions = []
    for i, feature in enumerate(spec.features):
        b, value = column(bin_col[i]), column(value_col[i])
        label_name, points_name = names.features[i]
        if follows[i] is None:
            pointed.append(exp.alias_(_label(feature, terms[i], b), label_name, quoted=True))
            pointed.append(exp.alias_(_points(spec, feature, terms[i], b, value), points_name, quoted=True))
            contributions.append(_contribution(feature, terms[i], b, value))
            continue
        # (-f)·v is -(f·v) and v / (-f) is -(v / f) bit for bit: IEEE rounding is symmetric in sign
        minus_factor = number(-spec.scaling.factor)
        from_log_odds = follows[i] == LOG_ODDS
        pointed.append(column(label_name))
        points = exp.Mul(this=minus_factor, expression=value) if from_log_odds else value
        pointed.append(exp.alias_(points, points_name, quoted=True))
        contributions.append(value.copy() if from_log_odds else exp.Div(this=value.copy(), expression=minus_factor.copy()))
    pointed.append(exp.alias_(total([number(spec.intercept)] + contributions), eta, quoted=True))
    pointed_query = exp.select(*pointed).from_(exp.to_table(identifier("binned")))

    # totalled: score and reason shortfalls
    carried = [column(n) for n in names.keys] + [column(n) for pair in names.features for n in pair]
    score = total([number(base_points(spec))] + [column(points) for _, points in names.features])
    if spec.scaling.rounding == "total":
        score = round_half_away_sql(score)
    totalled = [c.copy() for c in carried] + [column(eta), exp.alias_(score, "score", quoted=True)]
    points_of = {f.name: column(names.features[i][1]) for i, f in enumerate(spec.features)}
    max_of = {t.name: t.max_points for t in terms}
    for r, statement in enumerate(spec.reasons.statements):
        reference = statement_reference(statement, max_of)
        shortfall = exp.Sub(this=number(reference), expression=exp.paren(total([points_of[n].copy() for n in statement.features]), copy=False))
        totalled.append(exp.alias_(_held(shortfall), short_col[r], quoted=True))
    totalled_query = exp.select(*totalled).from_(exp.to_table(identifier("pointed")))

    steps = [("binned", binned_query), ("pointed", pointed_query), ("totalled", totalled_query)]

    # best_k / picked_k: successive maxima of the shortfalls, one pair of steps per reason slot
    kept = [c.copy() for c in carried] + [column(eta), column("score")] + [column(n) for n in short_col]
    picks: list[str] = []
    for k in range(1, len(names.reasons) + 1):
        best, pick = f"{INTERNAL}best_{k}", f"{INTERNAL}pick_{k}"
        for step, name, value in ((f"best_{k}", best, lambda: _best(short_col, picks)),
                                  (f"picked_{k}", pick, lambda: _pick(short_col, picks, best))):
            body = exp.select(*[c.copy() for c in kept], exp.alias_(value(), name, quoted=True))
            steps.append((step, body.from_(exp.to_table(identifier(steps[-1][0])))))
            kept.append(column(name))
        picks.append(pick)

    # final
    final = [c.copy() for c in carried] + [column("score")]
    if spec.scaling.reported_pd == "score":
        # the η the (rounded) score stands for, so rows with one score carry one PD
        stood_for = exp.Div(this=exp.paren(exp.Sub(this=number(spec.scaling.offset), expression=column("score")), copy=False),
                            expression=number(spec.scaling.factor))
        final.append(exp.alias_(_probability(stood_for), "pd", quoted=True))
    else:
        final.append(exp.alias_(_probability(column(eta)), "pd", quoted=True))
    final.append(exp.alias_(_grade(spec, column("score")), "grade", quoted=True))
    codes = [text(s.code) for s in spec.reasons.statements]
    texts = [text(s.text) for s in spec.reasons.statements]
    for k, (pick, name) in enumerate(zip(picks, names.reasons)):
        # no ELSE: a slot left empty (pick NULL) has no reason
        reason = case([(exp.EQ(this=column(pick), expression=integer(r)), code) for r, code in enumerate(codes)])
        final.append(exp.alias_(reason, name, quoted=True))
        if names.reason_texts:
            words = case([(exp.EQ(this=column(pick), expression=integer(r)), t.copy()) for r, t in enumerate(texts)])
            final.append(exp.alias_(words, names.reason_texts[k], quoted=True))
    final.append(exp.alias_(text(spec.model.name), "model_name", quoted=True))
    final.append(exp.alias_(text(spec.model.version), "model_version", quoted=True))
    final.append(exp.alias_(text(fp), "model_fingerprint", quoted=True))

    query = exp.select(*final).from_(exp.to_table(identifier(steps[-1][0])))
    for name, body in steps:
        query = query.with_(identifier(name), as_=body, copy=False)
    return query


# ---------------------------------------------------------------- per-feature pieces

def _one_number(spec: Spec, terms: FeatureTerms) -> str | None:
    """Which of a feature's two numbers per bin gives the other exactly in SQL arithmetic.

    ``LOG_ODDS`` when every bin's points are ``(-factor) · log_odds`` bit for bit (WoE or
    log-odds specs without per-bin rounding, as :mod:`scoremon.spec.terms` derives them),
    ``POINTS`` when every bin's log-odds are ``points / (-factor)`` (points specs whose points
    need no rounding), else ``None``. With one number the binning CASE yields that number
    itself instead of a bin number to look it up by: DuckDB evaluates a CASE branch by branch
    and a list lookup is one more pass, so a query that reads only the score and PD (an
    aggregate) bins each feature once and looks nothing up (``scoremon bench``, lines a and c).
    """
    minus_factor = -spec.scaling.factor
    if all(_same_bits(t.points, minus_factor * t.log_odds) for t in terms.bins):
        return LOG_ODDS
    if all(_same_bits(t.log_odds, t.points / minus_factor) for t in terms.bins):
        return POINTS
    return None


def bin_case(spec: Spec, feature, x: exp.Expression, outcomes: Sequence[exp.Expression],
             may_be_odd: bool = True) -> exp.Case:
    """The scoring query's CASE that finds a row's bin of a numeric or categorical ``feature``
    of ``spec`` in column ``x``, yielding ``outcomes[b]`` for bin ``b`` in
    :func:`~scoremon.spec.terms.feature_terms` order (intervals by lower edge or groups by label,
    then the catch-all, then the missing bin). Model development builds its WoE columns with it,
    so a fitted row is binned exactly as it will be scored."""
    return _bin_choice(feature, feature_terms(spec, feature), x, may_be_odd, outcomes)


def _bin_choice(feature, terms: FeatureTerms, x: exp.Expression, may_be_odd: bool,
                outcomes: Sequence[exp.Expression], kind: FixedPoint | None = None) -> exp.Case:
    """The CASE that finds a row's bin, yielding ``outcomes[b]`` for bin ``b``."""
    if isinstance(feature, NumericFeature):
        return _numeric_bin(feature, terms, x, may_be_odd, outcomes, kind)
    return _categorical_bin(feature, terms, x, outcomes)


def _numeric_bin(feature: NumericFeature, terms: FeatureTerms, x: exp.Expression, may_be_odd: bool,
                 outcomes: Sequence[exp.Expression], kind: FixedPoint | None = None) -> exp.Case:
    """The bin's outcome: the half-open comparisons first, the rare values' tests after them.

    Most rows stop at a comparison, so testing NULL and NaN last saves two passes over every
    column (``scoremon bench``). That order is safe because the rare values fail every
    comparison on every engine: a comparison with NULL is not true, NaN is larger than every
    number (DuckDB, PostgreSQL, Spark) or unordered (IEEE engines), and +inf is above every
    inner edge, which are finite. Only −inf passes a comparison (the first, bin 0), so its
    test goes first when the spec sends it elsewhere; +inf needs a test only when it does not
    go to the top bin, the ELSE. A column of exact type ``kind`` is compared exactly
    (:func:`_below`).
    """
    missing = len(terms.bins) - 1
    ordered = numeric_bins_in_order(feature)
    top = len(ordered) - 1
    routes = {key: terms.index(label) for key, label in special_routes(feature).items()}
    first, last = [], [(exp.Is(this=x.copy(), expression=exp.Null()), outcomes[missing].copy())]
    if may_be_odd:
        if routes["negative_infinity"] != 0:
            first.append((_is_odd(x, "-Infinity"), outcomes[routes["negative_infinity"]].copy()))
        last.append((_is_odd(x, "NaN"), outcomes[routes["nan"]].copy()))
        if routes["positive_infinity"] != top:
            last.append((_is_odd(x, "Infinity"), outcomes[routes["positive_infinity"]].copy()))
    below = [_below(x, b.upper, feature.closed, kind) for b in ordered[:-1]]  # below[i]: in bin i or lower
    return case(first + _runs(below, outcomes) + last, outcomes[top].copy())


def _below(x: exp.Expression, edge: float, closed: str, kind: FixedPoint | None) -> exp.Expression:
    """``x < edge`` (bins closed on the lower side) or ``x <= edge``; on a column of exact type
    ``kind`` against a literal of that kind, worked out by :func:`scoremon.exact.exact_test`
    (a double would round a BIGINT above 2**53 or a DECIMAL of 16 digits before comparing)."""
    if kind is None:
        compare = exp.LT if closed == "lower" else exp.LTE
        return compare(this=x.copy(), expression=number(edge))
    test = exact_test(edge, closed, kind)
    if isinstance(test, bool):
        return exp.true() if test else exp.false()
    inclusive, value = test
    literal: exp.Expression = exp.Literal.number(literal_text(value))
    if value < 0:
        literal = exp.Neg(this=literal)
    return (exp.LTE if inclusive else exp.LT)(this=x.copy(), expression=literal)


def _runs(below: Sequence[exp.Expression], outcomes: Sequence[exp.Expression]) -> list[tuple[exp.Expression, exp.Expression]]:
    """The comparisons of a CASE chain over bins 0 … len(below), in runs of about √n bins.

    A chain of n comparisons makes a row take n / 2 of them on average; testing a run's top
    edge first and then the run's own edges takes about 2·√n / 2. Each row still meets the
    edges in ascending order, so the bin found is the chain's. With fewer than six edges the
    plain chain is as fast (``scoremon bench``, line a).
    """
    count = len(below)
    if count < 6:
        return [(below[k].copy(), outcomes[k].copy()) for k in range(count)]
    size = math.ceil(count / round(math.sqrt(count)))
    runs = []
    for start in range(0, count, size):
        end = min(start + size, count) - 1
        inner = case([(below[k].copy(), outcomes[k].copy()) for k in range(start, end)], outcomes[end].copy())
        runs.append((below[end].copy(), inner))
    return runs


def _is_odd(x: exp.Expression, name: str) -> exp.Expression:
    """``x = CAST('NaN' AS DOUBLE)`` (or ±Infinity); dialects rewrite it where needed."""
    return exp.EQ(this=x.copy(), expression=double_constant(name))


def _categorical_bin(feature: CategoricalFeature, terms: FeatureTerms, x: exp.Expression,
                     outcomes: Sequence[exp.Expression]) -> exp.Case:
    branches = [(exp.Is(this=x.copy(), expression=exp.Null()), outcomes[len(terms.bins) - 1].copy())]
    groups = {g.label: g for g in feature.groups}
    for i, term in enumerate(terms.bins[:-2]):
        values = [category_literal(v) for v in groups[term.label].values]
        branches.append((exp.In(this=x.copy(), expressions=values), outcomes[i].copy()))
    return case(branches, outcomes[len(terms.bins) - 2].copy())


def _linear_bin(feature: LinearFeature, x: exp.Expression, may_be_odd: bool) -> exp.Case:
    """LOW, IN or HIGH by the clipping bounds, MISSING for NULL (and NaN); ordered as in
    :func:`_numeric_bin`: NULL and NaN fail both comparisons, so they are tested after them."""
    tests = [
        (exp.LT(this=x.copy(), expression=number(feature.lower)), integer(LINEAR_LOW)),
        (exp.LTE(this=x.copy(), expression=number(feature.upper)), integer(LINEAR_IN)),
        (exp.Is(this=x.copy(), expression=exp.Null()), integer(LINEAR_MISSING)),
    ]
    if may_be_odd:
        tests.append((_is_odd(x, "NaN"), integer(LINEAR_MISSING)))
    return case(tests, integer(LINEAR_HIGH))


def _linear_value(feature: LinearFeature, x: exp.Expression) -> exp.Case:
    """clip(x) as a double. A missing row (NULL or NaN) gets the upper bound here, but its bin
    number is MISSING and every reader of this value tests the bin number first."""
    return case([
        (exp.LT(this=x.copy(), expression=number(feature.lower)), number(feature.lower)),
        (exp.LTE(this=x.copy(), expression=number(feature.upper)), exp.Cast(this=x.copy(), to=exp.DataType.build("DOUBLE"))),
    ], number(feature.upper))


def _label(feature, terms: FeatureTerms, b: exp.Expression) -> exp.Case:
    if isinstance(feature, LinearFeature):
        from .spec.model import LINEAR_LABELS  # noqa: PLC0415 - a constant, kept with the model
        labels = list(LINEAR_LABELS) + [terms.bins[0].label]
    else:
        labels = [t.label for t in terms.bins]
    return by_bin(b, [text(label) for label in labels])


def _centred(feature: LinearFeature, value: exp.Expression) -> exp.Expression:
    return exp.paren(exp.Sub(this=value, expression=number(feature.center)), copy=False)


def _points(spec: Spec, feature, terms: FeatureTerms, b: exp.Expression, value: exp.Expression) -> exp.Expression:
    if isinstance(feature, LinearFeature):
        points = exp.Mul(this=number(linear_points_slope(spec, feature)), expression=_centred(feature, value))
        if spec.scaling.rounding == "per_bin":
            points = round_half_away_sql(points)
        return case([(exp.EQ(this=b, expression=integer(LINEAR_MISSING)), number(terms.bins[0].points))], points)
    return by_bin(b, [number(t.points) for t in terms.bins])


def _same_bits(a: float, b: float) -> bool:
    return struct.pack("<d", a) == struct.pack("<d", b)


def _contribution(feature, terms: FeatureTerms, b: exp.Expression, value: exp.Expression) -> exp.Expression:
    if isinstance(feature, LinearFeature):
        linear = exp.Mul(this=number(linear_slope(feature)), expression=_centred(feature, value))
        return case([(exp.EQ(this=b, expression=integer(LINEAR_MISSING)), number(terms.bins[0].log_odds))], linear)
    return by_bin(b, [number(t.log_odds) for t in terms.bins])


def _held(shortfall: exp.Expression) -> exp.Expression:
    """A shortfall as the whole billionths of a point it is ranked by, 0 when not positive
    (the rule is stated beside :data:`scoremon.spec.terms.SHORTFALL_UNITS`)."""
    units = exp.Mul(this=exp.paren(shortfall, copy=False), expression=number(SHORTFALL_UNITS))
    # Spark's FLOOR of a double is a BIGINT: back to DOUBLE (exact below 2**52)
    rounded = exp.Cast(this=exp.Floor(this=exp.Add(this=units.copy(), expression=number(0.5))),
                       to=exp.DataType.build("DOUBLE"))
    return case([(exp.GTE(this=units.copy(), expression=number(2.0 ** 52)), units.copy()),
                 (exp.LT(this=units.copy(), expression=number(0.5)), number(0.0))], rounded)


def _not_picked(r: int, picks: Sequence[str]) -> list[exp.Expression]:
    return [exp.NEQ(this=column(pick), expression=integer(r)) for pick in picks]


def _best(short_col: Sequence[str], picks: Sequence[str]) -> exp.Expression:
    """The largest shortfall among statements not yet picked (picked ones count as 0).

    A pick is NULL only when no shortfall was positive, and then the ELSE keeps the
    shortfall, which is not positive either: the slot stays empty as it should.
    """
    candidates = []
    for r, name in enumerate(short_col):
        shortfall = column(name)
        if picks:
            taken = exp.or_(*[exp.EQ(this=column(pick), expression=integer(r)) for pick in picks], copy=False)
            shortfall = case([(taken, number(0.0))], shortfall)
        candidates.append(shortfall)
    if len(candidates) == 1:
        return candidates[0]  # Spark's GREATEST wants two arguments at least
    # ignore_nulls: GREATEST as DuckDB, PostgreSQL and Spark define it; without it sqlglot wraps
    # each argument in a NULL test for DuckDB, copying every CASE (none is ever NULL here)
    return exp.Greatest(this=candidates[0], expressions=candidates[1:], ignore_nulls=True)


def _pick(short_col: Sequence[str], picks: Sequence[str], best: str) -> exp.Expression:
    """The first statement, in declaration order, not yet picked whose shortfall is the best.

    NULL when the best is not positive. Once the best is positive some unpicked statement
    holds it exactly, so the last statement needs no test (it is the ELSE).
    """
    largest = column(best)
    branches = [(exp.LTE(this=largest.copy(), expression=number(0.0)), exp.Null())]
    for r, name in enumerate(short_col[:-1]):
        holds = exp.EQ(this=column(name), expression=largest.copy())
        branches.append((exp.and_(holds, *_not_picked(r, picks), copy=False), integer(r)))
    return case(branches, integer(len(short_col) - 1))


def _probability(eta: exp.Expression) -> exp.Expression:
    clamped = case([
        (exp.GT(this=eta.copy(), expression=number(ETA_CLAMP)), number(ETA_CLAMP)),
        (exp.LT(this=eta.copy(), expression=number(-ETA_CLAMP)), number(-ETA_CLAMP)),
    ], eta.copy())
    denominator = exp.Add(this=number(1.0), expression=exp.Exp(this=exp.Neg(this=exp.paren(clamped, copy=False))))
    return exp.Div(this=number(1.0), expression=exp.paren(denominator, copy=False))


def _grade(spec: Spec, score: exp.Expression) -> exp.Expression:
    grades = sorted(spec.grades, key=lambda g: g.lower, reverse=True)
    branches = [(exp.GTE(this=score.copy(), expression=number(g.lower)), text(g.name)) for g in grades[:-1]]
    return case(branches, text(grades[-1].name))
