"""``scoremon diff`` run in-process: exit codes 0 / 1 / 2, what it prints, the files it writes."""
from __future__ import annotations

import json
import math

import pytest

from scoremon.cli import main
from scoremon.engines import DuckDBEngine
from scoremon.report import terminal
from scoremon.spec import fingerprint, load_spec

from .specs import BASE, REFORMATTED, feature, variant_text
from .test_impact import COLUMNS, make_rows
from tests.sql import tree


@pytest.fixture(autouse=True)
def eighty_columns(monkeypatch):
    monkeypatch.setattr(terminal.out, "width", 80)


def write(tmp_path, name: str, text: str):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.fixture
def new_spec(tmp_path):
    def change(d):
        feature(d, "age")["bins"][1]["woe"] = 0.2
        d["features"] = [f for f in d["features"] if f["name"] != "tenure"]
        d["reasons"]["statements"][2]["features"] = ["utilisation"]
        d["model"]["version"] = "2"
    return write(tmp_path, "v2.yaml", variant_text(change))


@pytest.fixture
def book(tmp_path):
    path = tmp_path / "book.duckdb"
    engine = DuckDBEngine(str(path))
    engine.write_rows(["book"], COLUMNS, make_rows(300), "loading the test book")
    engine.close()
    return path


def test_same_model_exits_0_and_shows_both_fingerprints(capsys):
    code = main(["diff", str(BASE), str(REFORMATTED)])
    out = capsys.readouterr().out
    assert code == 0
    assert "no change" in out
    assert " ".join(out.split()).count(f"fingerprint {fingerprint(load_spec(BASE))}") == 2


def test_different_models_exit_1_with_the_changes(capsys, new_spec):
    code = main(["diff", str(BASE), str(new_spec)])
    out = capsys.readouterr().out
    assert code == 1
    assert "class structure" in out
    assert "feature tenure removed" in out
    assert "age in [25, 40): points" in out
    assert "version 2 (was 1)" in out
    assert max(len(line) for line in out.splitlines()) <= 80
    assert not any(line.endswith(" ") for line in out.splitlines() if not line.startswith(("Decision", "Fair")))


def test_impact_json_and_markdown(capsys, tmp_path, new_spec, book):
    json_file, markdown_file = tmp_path / "diff.json", tmp_path / "diff.md"
    code = main(["diff", str(BASE), str(new_spec), "--db", str(book), "--table", "book", "--outcome", "defaulted",
                 "--cutoff", "580", "--json", str(json_file), "--markdown", str(markdown_file)])
    out = capsys.readouterr().out
    words = " ".join(out.split())
    assert code == 1
    assert f"impact on table book in {book}: 300 rows" in words
    assert "grade migration" in out and "swap set at cut-off 580" in out
    assert max(len(line) for line in out.splitlines()) <= 80

    data = json.loads(json_file.read_text(encoding="utf-8"))
    assert data["diff"]["effect"] == "structure"
    assert data["diff"]["old"]["fingerprint"] == fingerprint(load_spec(BASE))
    assert data["impact"]["rows"] == 300
    assert sum(cell["rows"] for cell in data["impact"]["swap_set"]["cells"]) == 300
    assert {c["kind"] for c in data["diff"]["changes"]} >= {"feature_removed", "bin_value_changed"}

    text = markdown_file.read_text(encoding="utf-8")
    assert fingerprint(load_spec(BASE)) in text and fingerprint(load_spec(new_spec)) in text
    assert f"Population: table book in {book}" in text
    assert "- Run at: 20" in text
    assert "### Swap set" in text and "### Grade migration" in text
    assert "Nothing here is legal advice" in text


def test_a_file_population_works_too(capsys, tmp_path, new_spec, book):
    parquet = tmp_path / "book.parquet"
    engine = DuckDBEngine(str(book))
    engine.execute(tree(f"COPY book TO '{parquet}' (FORMAT PARQUET)"), "writing a parquet copy")
    engine.close()
    code = main(["diff", str(BASE), str(new_spec), "--input", str(parquet)])
    assert code == 1
    assert f"impact on file {parquet}: 300 rows" in " ".join(capsys.readouterr().out.split())


def test_invalid_specs_exit_2_with_every_problem_located(capsys, tmp_path):
    def gap(d):
        feature(d, "age")["bins"][1]["lower"] = 26
    broken = write(tmp_path, "broken.yaml", variant_text(gap))
    also_broken = write(tmp_path, "also.yaml", variant_text(lambda d: d["scaling"].update(pdo=-20)))
    code = main(["diff", str(broken), str(also_broken)])
    err = capsys.readouterr().err
    assert code == 2
    assert f"{broken}:25:5: features[0].bins[1].lower:" in err
    assert f"{also_broken}:14:8: scaling.pdo:" in err


@pytest.mark.parametrize("options, message", [
    (["--cutoff", "600"], "--cutoff describe the population; also give --table (with --db) or --input"),
    (["--outcome", "y"], "--outcome describe the population"),
    (["--table", "book"], "--table names a table in a database; give the database with --db"),
])
def test_options_without_a_population_exit_2(capsys, new_spec, options, message):
    code = main(["diff", str(BASE), str(new_spec), *options])
    assert code == 2
    assert message in capsys.readouterr().err


def test_a_population_without_the_columns_exits_2(capsys, tmp_path, book):
    renamed = write(tmp_path, "renamed.yaml", variant_text(lambda d: feature(d, "age").update(column="age_years")))
    code = main(["diff", str(BASE), str(renamed), "--db", str(book), "--table", "book"])
    err = capsys.readouterr().err
    assert code == 2
    assert ("new version: column 'age_years' (feature 'age', its `column:` in the spec) is not in the input; "
            "the nearest is 'age'") in err


def test_an_outcome_that_is_not_0_or_1_exits_2(capsys, tmp_path, new_spec):
    path = tmp_path / "odd.duckdb"
    engine = DuckDBEngine(str(path))
    engine.write_rows(["book"], COLUMNS, [(1, 30.0, "N1", 0.5, 3.0, 1), (2, math.nan, "S1", 0.2, 9.0, 7)], "loading")
    engine.close()
    code = main(["diff", str(BASE), str(new_spec), "--db", str(path), "--table", "book", "--outcome", "defaulted"])
    assert code == 2
    assert "has 1 values other than 0, 1 and empty (NULL)" in capsys.readouterr().err


def test_help_documents_the_exit_codes(capsys):
    with pytest.raises(SystemExit):
        main(["diff", "--help"])
    out = " ".join(capsys.readouterr().out.split())
    assert "0 the specs are the same model (equal fingerprints); 1 they differ; 2 invalid input" in out
