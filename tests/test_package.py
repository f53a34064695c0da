"""The package's public surface, and what importing it costs."""
import json
import subprocess
import sys
from importlib import metadata

import pytest

import scoremon
from scoremon.cli import main
from scoremon.spec.schema import SHIPPED_SCHEMA, spec_json_schema
from tests.conftest import ROOT


def test_the_public_names_are_these():
    # the package's face: change this list on purpose, with the README's library section
    assert scoremon.__all__ == [
        "EngineError", "InputError", "Problem", "ScoreResult", "ScoremonError", "SpecError", "canonical_form",
        "compile_model", "compile_sql", "fingerprint", "load_spec", "open_engine", "parse_spec", "render_sql",
        "score", "source_relation",
    ]


def test_all_is_sorted_and_complete():
    assert scoremon.__all__ == sorted(scoremon.__all__)
    for name in scoremon.__all__:
        assert hasattr(scoremon, name), name


def test_shipped_schema_matches_model():
    # regenerate on purpose with: scoremon schema --out scoremon/spec/spec.schema.json
    assert json.loads(SHIPPED_SCHEMA.read_text()) == spec_json_schema()


HEAVY = ("duckdb", "numpy", "pandas", "psycopg", "pyarrow", "pyspark", "scipy")


def _imported_after(code: str) -> list[str]:
    """Which heavy libraries a fresh interpreter has imported after running ``code``."""
    probe = f"{code}\nimport sys\nprint(sorted(m for m in {HEAVY!r} + ('pydantic', 'rich', 'sqlglot') if m in sys.modules))"
    done = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, check=True, cwd=ROOT)
    return json.loads(done.stdout.replace("'", '"'))


def test_help_and_version_load_no_library_beyond_the_standard_one():
    assert _imported_after("import scoremon.cli\nscoremon.cli.build_parser()") == []


def test_check_loads_the_spec_and_the_printer_only():
    code = "from scoremon import api, commands\napi.load_spec('tests/fixtures/small.yaml')"
    assert _imported_after(code) == ["pydantic", "rich"]


def test_the_face_hands_names_on_when_asked():
    assert _imported_after("import scoremon") == []
    assert "sqlglot" in _imported_after("import scoremon\nscoremon.compile_model")


def test_version_is_printed(capsys):
    with pytest.raises(SystemExit) as raised:
        main(["--version"])
    assert raised.value.code == 0
    # the installed distribution's metadata (pyproject.toml reads scoremon.__version__)
    assert capsys.readouterr().out.strip() == f"scoremon {metadata.version('scoremon')}"
