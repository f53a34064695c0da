"""Exact comparison of whole-number and DECIMAL columns with bin edges (scoremon.exact).

The reference is Python's own exact comparison: ``int < float`` and ``Decimal < Decimal`` are
decided on the exact values, never through a rounded float (Python language reference,
"Value comparisons": numbers of different types compare by their exact mathematical values).
"""
from decimal import Decimal

import pytest

from scoremon import api
from scoremon.engines import DuckDBEngine
from scoremon.exact import exact_test, fixed_point
from scoremon.spec import parse_spec
from tests.conftest import FIXTURES
from tests.sql import fetched, tree

EDGES = [540.5, 540.0, -540.5, 0.3, 9007199254740992.0, -2.5, 1e300, -1e300, 1e-300, 0.0]


def holds(test, x) -> bool:
    if isinstance(test, bool):
        return test
    inclusive, literal = test
    return x <= literal if inclusive else x < literal


@pytest.mark.parametrize("closed", ["lower", "upper"])
@pytest.mark.parametrize("edge", EDGES)
def test_whole_number_bound_decides_like_the_exact_comparison(edge, closed):
    kind = fixed_point("BIGINT")
    test = exact_test(edge, closed, kind)
    centre = int(edge) if abs(edge) < 2 ** 62 else 0
    for x in list(range(centre - 3, centre + 4)) + [2 ** 63 - 1, -(2 ** 63), 9007199254740993]:
        expected = x < Decimal(repr(edge)) if closed == "lower" else x <= Decimal(repr(edge))
        assert holds(test, x) == expected, (edge, closed, x)


def test_the_half_on_a_whole_number_column_is_worked_out_on_its_side():
    # x < 540.5 on whole numbers is x < 541; x <= 540.5 is x <= 540 (hand-worked)
    assert exact_test(540.5, "lower", fixed_point("INTEGER")) == (False, Decimal(541))
    assert exact_test(540.5, "upper", fixed_point("INT4")) == (True, Decimal(540))
    # beyond what a SMALLINT holds, the answer is the same for every value
    assert exact_test(1e6, "lower", fixed_point("SMALLINT")) is True
    assert exact_test(-1e6, "upper", fixed_point("SMALLINT")) is False


@pytest.mark.parametrize("closed", ["lower", "upper"])
@pytest.mark.parametrize("edge", EDGES)
def test_decimal_bound_decides_like_the_exact_comparison(edge, closed):
    kind = fixed_point("DECIMAL(18,6)")
    test = exact_test(edge, closed, kind)
    step = Decimal("0.000001")
    written = Decimal(repr(edge))
    centre = written.quantize(step) if abs(written) < 10 ** 12 else Decimal(0)
    for k in range(-3, 4):
        x = centre + k * step
        expected = x < written if closed == "lower" else x <= written
        assert holds(test, x) == expected, (edge, closed, x)


def test_unconstrained_numeric_meets_the_edge_as_written():
    assert exact_test(0.3, "lower", fixed_point("NUMERIC")) == (False, Decimal("0.3"))
    assert fixed_point("DOUBLE") is None and fixed_point("VARCHAR") is None


def test_a_bigint_above_two_to_the_53_lands_above_its_edge_on_duckdb():
    """The issue's case: 9007199254740993 against a (…, 9007199254740992] bin, and
    999999999999.500001 in a DECIMAL(18,6) column against 999999999999.5."""
    spec = parse_spec((FIXTURES / "edge_deck.yaml").read_text(encoding="utf-8"), "edge_deck.yaml")
    engine = DuckDBEngine(":memory:")
    engine.write_rows(["t"], [("Order", "BIGINT"), ("Amount", "DECIMAL(18,6)"), ('x"; DROP TABLE t; --', "DOUBLE"),
                              ("Weiß Größe", "DOUBLE"), ("région", "VARCHAR"), ("SELECT", "BIGINT"),
                              ('util "ratio"', "DOUBLE")],
                      [(9007199254740993, Decimal("999999999999.500001"), 1.0, 2.0, "N1", 1, 0.5)], "making a row")
    api.score(spec, engine, api.source_relation(table="t"), out_table="s")
    assert fetched(engine, 'SELECT select_bin, amount_bin FROM s') == [
        ("(9007199254740992, inf]", "[999999999999.5, inf)")]
