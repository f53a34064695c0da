"""Stamps: the compiled SQL names the model and scoremon's version; the JSON and Markdown
carry scoremon's version and the population's row count."""
from __future__ import annotations

import json
from importlib.metadata import version

import sqlglot

from scoremon import api
from scoremon.cli import main
from scoremon.engines import DuckDBEngine
from scoremon.spec import fingerprint, parse_spec
from tests.conftest import FIXTURES

SMALL = (FIXTURES / "small.yaml").read_text(encoding="utf-8")
VERSION = version("scoremon")  # the installed distribution's own metadata


def test_compiled_sql_begins_with_a_comment_naming_model_version_fingerprint_and_scoremon():
    spec = parse_spec(SMALL)
    sql = api.compile_sql(spec, "duckdb")
    first = sql.splitlines()[0]
    assert first == (f"/* small_test_model version 3, fingerprint {fingerprint(spec)}; "
                     f"compiled by scoremon {VERSION} */")


def test_a_hostile_model_name_stays_inside_the_comment():
    spec = parse_spec(SMALL.replace("name: small_test_model", 'name: "x */ DROP TABLE t; --\\n/* y"'))
    sql = api.compile_sql(spec, "postgres")
    # one statement, and the comment is closed only where scoremon closes it
    assert len(sqlglot.parse(sql, read="postgres")) == 1
    assert sql.splitlines()[0].count("*/") == 1 and sql.splitlines()[0].endswith("*/")


def test_diff_json_and_markdown_carry_the_version_and_the_row_count(tmp_path, capsys):
    database = tmp_path / "book.duckdb"
    engine = DuckDBEngine(str(database))
    engine.write_rows(["book"], [("age", "DOUBLE"), ("region_code", "VARCHAR"), ("utilisation", "DOUBLE")],
                      [(30.0, "N1", 0.5), (20.0, "S1", 0.1), (50.0, None, None)], "loading")
    engine.close()
    new = tmp_path / "new.yaml"
    new.write_text(SMALL.replace("intercept: -2.0", "intercept: -1.9"), encoding="utf-8")
    out_json, out_md = tmp_path / "d.json", tmp_path / "d.md"
    main(["diff", str(FIXTURES / "small.yaml"), str(new), "--db", str(database), "--table", "book",
          "--json", str(out_json), "--markdown", str(out_md)])
    data = json.loads(out_json.read_text())
    assert data["scoremon_version"] == VERSION and data["impact"]["rows"] == 3
    text = out_md.read_text()
    assert f"- scoremon version: {VERSION}" in text and "(3 rows)" in text
