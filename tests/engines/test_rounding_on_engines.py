"""The SQL rounding rule gives, on DuckDB, PostgreSQL and Spark, exactly what the rule's
definition gives in exact arithmetic with Python's ``fractions`` module (up when the fraction falls
short of the half by at most max(|x|, 128) · 2⁻⁴⁸; scoremon.spec.terms.round_half_away) — the
standard library as the outside check. Half away from zero is the usual commercial rounding of a score [common practice].
"""
from __future__ import annotations

import math
import random

from sqlglot import exp

from scoremon.compiler import round_half_away_sql
from scoremon.trees import column
from scoremon.trees import table_path
from scoremon.spec.terms import round_half_away


def tricky_values() -> list[float]:
    values = [0.0, 0.5, 1.5, 2.5, 599.5, 0.49999999999999994, 2.4999999999999996, 1e-13, 0.4999999999995,
              1.4999999999995, 3.4999999999995001, 0.9999999999995, 7.9999999999994996,
              2.0 ** 52 - 0.5, 2.0 ** 52, 2.0 ** 52 + 1, 2.0 ** 53 + 2, 1e16 + 2, 1e20, 1e26, 1e300]
    for whole in (0, 1, 2, 17, 600, 123456789, 2 ** 40):
        for fraction in (0.5, 0.4999999999995, 0.4999999999994, 0.4999999999996, 0.9999999999995):
            middle = whole + fraction
            values += [math.nextafter(middle, -math.inf), middle, math.nextafter(middle, math.inf)]
    # large scores: the half and up to 40 units in the last place below it, either side of the hold
    for whole in (519, 4500, 7000, 123456, 2 ** 40):
        middle = whole + 0.5
        for _ in range(40):
            middle = math.nextafter(middle, -math.inf)
            values.append(middle)
    draw = random.Random(20261202)
    values += [draw.uniform(-1, 1) * 10 ** draw.randint(-3, 18) for _ in range(300)]
    return values + [-v for v in values]


def test_sql_rounding_matches_the_decimal_definition_on_every_engine(each_engine):
    values = tricky_values()
    each_engine.write_rows(["rounding_cases"], [("id", "BIGINT"), ("x", "DOUBLE")],
                           list(enumerate(values)), "loading the rounding cases")
    query = (exp.select(column("id"), exp.alias_(round_half_away_sql(column("x")), "rounded", quoted=True))
             .from_(table_path(["rounding_cases"])).order_by(column("id")))
    rows = each_engine.query(query, "rounding the cases")
    assert len(rows) == len(values)
    wrong = []
    for i, got in ((row.id, row.rounded) for row in rows):
        want = round_half_away(values[i])
        # exactly the same double, and a zero always +0.0
        if not (got == want and math.copysign(1.0, got) == math.copysign(1.0, want)):
            wrong.append((values[i], got, want))
    assert wrong == []
