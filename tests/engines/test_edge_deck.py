"""Identical answers on every engine: the edge-value deck scored on DuckDB, PostgreSQL and Spark.

Each engine's scores are compared with the independent reference scorer (tests/reference_scorer.py)
and, for PostgreSQL and Spark, with DuckDB's: bins, points, scores, grades and reasons exactly,
PDs within 1e-12. The deck (tests/engines/deck.py) is loaded through each engine's own
``write_rows``, then scored through ``api.score`` into a table, as a user would.
"""
from __future__ import annotations

import math

import pytest
from sqlglot import exp

from scoremon import api
from scoremon.compiler import output_columns
from scoremon.trees import table_path
from scoremon.engines import DuckDBEngine
from scoremon.spec import parse_spec
from tests.conftest import FIXTURES
from tests.engines.deck import KEY, build_deck
from tests.reference_scorer import ReferenceScorer

PD_TOLERANCE = 1e-12
WHOLE_NUMBER_COLUMNS = {"Order"}
DECIMAL_COLUMNS = {"Amount"}
SPEC_TEXT = (FIXTURES / "edge_deck.yaml").read_text(encoding="utf-8")
ROUNDINGS = ["total", "per_bin", "none"]


def edge_spec(rounding: str):
    text = SPEC_TEXT.replace("rounding: total", f"rounding: {rounding}")
    assert f"rounding: {rounding}" in text
    return parse_spec(text, "edge_deck.yaml")


def score_deck(engine, spec) -> tuple[list[str], list[tuple]]:
    """Load the deck into ``engine``, score it into a table, read the table back ordered by key."""
    columns, rows = build_deck(spec, WHOLE_NUMBER_COLUMNS, DECIMAL_COLUMNS)
    engine.write_rows(["edge_deck"], columns, rows, "loading the edge deck")
    api.score(spec, engine, api.source_relation(table="edge_deck"), keys=[KEY], out_table="edge_scores")
    query = (exp.select(exp.Star()).from_(table_path(["edge_scores"]))
             .order_by(exp.column(exp.to_identifier(KEY, quoted=True))))
    names = [column.name for column in engine.describe(query, "reading columns")]
    return names, [tuple(row.values()) for row in engine.query(query, "reading the edge scores")]


def differences(names: list[str], actual: list[tuple], expected: list[dict], engine: str, against: str) -> list[str]:
    found = []
    if len(actual) != len(expected):
        return [f"{engine}: {len(actual)} rows, {against}: {len(expected)}"]
    for row, want in zip(actual, expected):
        got = dict(zip(names, row))
        for name, value in want.items():
            other = got.get(name, "<missing column>")
            if name == "pd":
                same = isinstance(other, float) and abs(other - value) <= PD_TOLERANCE
            elif isinstance(value, float) and math.isnan(value):
                same = isinstance(other, float) and math.isnan(other)
            else:
                same = other == value and type(other) is type(value)
            if not same:
                found.append(f"row {got.get(KEY)}: {name}: {engine} {other!r}, {against} {value!r}")
    return found


@pytest.mark.parametrize("rounding", ROUNDINGS)
def test_edge_deck_scores_like_the_reference_and_like_duckdb(each_engine, rounding):
    spec = edge_spec(rounding)
    names, scored = score_deck(each_engine, spec)

    # the hostile output names arrive intact, in order
    assert names == list(output_columns(spec, [KEY]).all)

    columns, rows = build_deck(spec, WHOLE_NUMBER_COLUMNS, DECIMAL_COLUMNS)
    scorer = ReferenceScorer(spec)
    expected = []
    for row in rows:
        values = dict(zip([name for name, _ in columns], row))
        expected.append({KEY: values[KEY], **scorer.score_row(values)})
    problems = differences(names, scored, expected, each_engine.dialect, "reference")

    if each_engine.dialect != "duckdb":
        duckdb = DuckDBEngine(":memory:")
        try:
            duck_names, duck_scored = score_deck(duckdb, spec)
        finally:
            duckdb.close()
        as_dicts = [dict(zip(duck_names, row)) for row in duck_scored]
        problems += differences(names, scored, as_dicts, each_engine.dialect, "duckdb")

    assert not problems, f"{len(problems)} differences:\n" + "\n".join(problems[:40])


def test_edge_deck_reaches_every_edge_case():
    """The deck really holds what the cross-engine test relies on (a guard on the deck itself)."""
    spec = edge_spec("total")
    columns, rows = build_deck(spec, WHOLE_NUMBER_COLUMNS, DECIMAL_COLUMNS)
    scorer = ReferenceScorer(spec)
    names = [name for name, _ in columns]
    scored = [scorer.score_row(dict(zip(names, row))) for row in rows]
    first = 'x"; DROP TABLE t; --'
    labels = {r[f"{first}_bin"] for r in scored}
    # every bin of the first feature, the missing bin, and NaN routed to 'tiny'
    assert labels == {"huge negative", "large negative", "[-0.1, 0)", "tiny", "[1e-300, 0.3)",
                      "[0.3, 250000000)", "it's huge", "missing; DROP"}
    nan_rows = [s for r, s in zip(rows, scored) if isinstance(r[1], float) and math.isnan(r[1])]
    assert nan_rows and all(s[f"{first}_bin"] == "tiny" for s in nan_rows)
    assert {r["Région €_bin"] for r in scored} == {"north", "south \\ east", "elsewhere", "missing"}
    assert {r["grade"] for r in scored} == {"A+", "B 'b'", "C", "D"}
    # η beyond ±700 on both sides: PD 1 and PD below 1e-300 both occur
    assert max(r["pd"] for r in scored) == 1.0 and min(r["pd"] for r in scored) < 1e-300
    # ties between reason shortfalls occur, so the tie-break is exercised
    assert any(r["reason_1"] is not None and r["reason_2"] is not None for r in scored)
