"""The diff's population impact gives the same answer on every engine.

The diff tests (tests/diff/test_impact.py) check the impact query against an independent
computation on DuckDB; here the same population, loaded through each engine's ``write_rows``,
must give the same Impact record on PostgreSQL and Spark as on DuckDB: every count exactly,
every mean and rate to 1e-9 relative (engines add a column's values in different orders).
"""
from __future__ import annotations

import dataclasses
import math

import pytest

from scoremon import api
from scoremon.engines import DuckDBEngine
from tests.conftest import ENGINES_RUN, open_test_engine
from tests.diff.specs import base, variant
from tests.diff.test_impact import COLUMNS, CUTOFF, make_rows, new_version

RELATIVE = 1e-9


def same(a, b, path: str = "impact") -> list[str]:
    """Every place where ``a`` and ``b`` differ (floats compared to RELATIVE)."""
    if dataclasses.is_dataclass(a) and dataclasses.is_dataclass(b):
        return same(dataclasses.asdict(a), dataclasses.asdict(b), path)
    if isinstance(a, dict) and isinstance(b, dict):
        if a.keys() != b.keys():
            return [f"{path}: keys {sorted(a)} vs {sorted(b)}"]
        return [problem for key in a for problem in same(a[key], b[key], f"{path}.{key}")]
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        if len(a) != len(b):
            return [f"{path}: {len(a)} items vs {len(b)}"]
        return [problem for i, (x, y) in enumerate(zip(a, b)) for problem in same(x, y, f"{path}[{i}]")]
    if isinstance(a, float) or isinstance(b, float):
        if a is None or b is None:
            return [] if a is b else [f"{path}: {a!r} vs {b!r}"]
        if math.isnan(a) and math.isnan(b):
            return []
        return [] if math.isclose(a, b, rel_tol=RELATIVE, abs_tol=1e-12) else [f"{path}: {a!r} vs {b!r}"]
    return [] if a == b else [f"{path}: {a!r} vs {b!r}"]


# DuckDB is the reference here; tests/diff checks it against an independent computation
@pytest.mark.parametrize("name", [name for name in ENGINES_RUN if name != "duckdb"])
def test_impact_is_the_same_as_on_duckdb(request, name):
    with open_test_engine(request, name) as engine:
        check_impact(engine)


def check_impact(each_engine):
    rows = make_rows(600)
    old, new = base(), variant(new_version)
    each_engine.write_rows(["book"], COLUMNS, rows, "loading the test book")
    impact = api.measure_impact(old, new, each_engine, api.source_relation(table="book"), "table book",
                                outcome="defaulted", cutoff=CUTOFF)
    assert impact.rows == len(rows)

    reference = DuckDBEngine(":memory:")
    try:
        reference.write_rows(["book"], COLUMNS, rows, "loading the test book")
        expected = api.measure_impact(old, new, reference, api.source_relation(table="book"), "table book",
                                      outcome="defaulted", cutoff=CUTOFF)
    finally:
        reference.close()
    problems = same(impact, expected)
    assert not problems, f"{each_engine.dialect} differs from duckdb:\n" + "\n".join(problems[:30])


def test_impact_without_an_outcome_runs_on_every_engine(each_engine):
    # Without --outcome the outcome column is a bare NULL; PostgreSQL typed it as text and
    # refused SUM over it ("function sum(text) does not exist"). The same population with the
    # outcome given is the comparison: the scores and their moves do not depend on it.
    rows = make_rows(300)
    old, new = base(), variant(new_version)
    each_engine.write_rows(["book"], COLUMNS, rows, "loading the test book")
    source = api.source_relation(table="book")
    without = api.measure_impact(old, new, each_engine, source, "table book", cutoff=CUTOFF)
    with_outcome = api.measure_impact(old, new, each_engine, source, "table book", outcome="defaulted", cutoff=CUTOFF)
    assert (without.rows, without.rows_with_outcome, without.events, without.event_rate) == (len(rows), 0, 0, None)
    assert all((cell.rows_with_outcome, cell.events, cell.event_rate) == (0, 0, None)
               for cell in without.swap_set.cells)
    for field in ("mean_score_old", "mean_score_new", "mean_pd_old", "mean_pd_new", "score_change", "pd_change",
                  "migration", "first_reason", "spearman"):
        problems = same(getattr(without, field), getattr(with_outcome, field), field)
        assert not problems, "\n".join(problems[:30])
    assert [(c.name, c.rows) for c in without.swap_set.cells] == [(c.name, c.rows) for c in with_outcome.swap_set.cells]
