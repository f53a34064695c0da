"""The compiled SQL scores every row exactly as the independent reference scorer says.

Random valid specs (every feature type and value kind, both closed sides, routes for NaN and
±infinity, text and whole-number categories, all three rounding modes, grades, grouped reason
statements with and without a reference) meet input columns built to sit on and beside every
cut point and to hold NULL, NaN, ±infinity, extreme doubles and look-alike categories. The
spec goes through ``parse_spec`` (YAML text, as a user writes it) and the rows through
``scoremon.api.score`` into DuckDB; the reference (``tests/reference_scorer.py``) is written
from the documented semantics, not from the compiler.

Bin labels, points, score, grade and reasons must be identical; PD within 1e-12 (absolute
plus relative) because EXP may differ from Python's ``math.exp`` in the last bit.

The SQL that ``scoremon compile`` prints knows nothing of the column types (so it keeps the
NaN and infinity tests even for whole-number columns); run as it stands, it must give the
very same rows as the typed scoring path.
"""
from __future__ import annotations

import pandas as pd
import pytest
import yaml
from hypothesis import HealthCheck, given, settings

from scoremon.api import compile_sql
from scoremon.engines import DuckDBEngine
from scoremon.spec import fingerprint, parse_spec
from tests.compiler.spec_strategies import KEY, Scenario, scenarios
from tests.compiler.through_sql import close_pd, expected_output_names, score_columns
from tests.reference_scorer import score_frame


def _input_frame(columns: dict) -> pd.DataFrame:
    return pd.DataFrame({name: pd.Series(values, dtype=object) for name, (_, values) in columns.items()})


def _same(got, want) -> bool:
    """Labels and reason codes as text (or NULL); points and scores as the same double."""
    if want is None or isinstance(want, str):
        return got == want
    return isinstance(got, float) and got == want


@pytest.fixture(scope="module")
def engine():
    # one connection for every example: opening DuckDB costs more than scoring these rows
    engine = DuckDBEngine(":memory:")
    yield engine
    engine.close()


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.large_base_example])
@given(scenario=scenarios())
def test_compiled_sql_matches_reference_on_every_row(engine, scenario: Scenario):
    spec = parse_spec(yaml.safe_dump(scenario.spec_data, sort_keys=False, allow_unicode=True))
    names, got_rows = score_columns(spec, scenario.columns, KEY, engine)

    # README "Scored output": the columns and their order
    assert names == expected_output_names(spec, [KEY])

    frame = _input_frame(scenario.columns)
    expected = score_frame(spec, frame)
    assert len(got_rows) == len(expected)
    for got, (position, want) in zip(got_rows, expected.iterrows()):
        context = {column: frame.at[position, column] for column in frame.columns}
        assert got[KEY] == position
        for column, value in want.items():
            if column == "pd":
                assert close_pd(got["pd"], value), (column, got["pd"], value, context)
            else:
                assert _same(got[column], value), (column, got[column], value, context)
        assert got["model_name"] == spec.model.name
        assert got["model_version"] == spec.model.version
        assert got["model_fingerprint"] == fingerprint(spec)

    untyped = compile_sql(spec, "duckdb", "applications", keys=[KEY])
    assert engine.connection.execute(f"{untyped} ORDER BY 1").fetchall() == engine.connection.execute(
        'SELECT * FROM "scored" ORDER BY 1').fetchall()
