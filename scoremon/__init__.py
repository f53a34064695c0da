"""scoremon: logistic-regression scoring models kept as YAML specs, compiled to SQL, monitored.

The public library mirrors the command line::

    from scoremon import load_spec, compile_sql, open_engine, source_relation, score
"""
from .api import ScoreResult, compile_sql, score, source_relation
from .compiler import compile_model
from .dialects import render_sql
from .engines import open_engine
from .errors import EngineError, InputError, Problem, ScoremonError, SpecError
from .spec import canonical_form, fingerprint, load_spec, parse_spec

__all__ = [
    "EngineError",
    "InputError",
    "Problem",
    "ScoreResult",
    "ScoremonError",
    "SpecError",
    "canonical_form",
    "compile_model",
    "compile_sql",
    "fingerprint",
    "load_spec",
    "open_engine",
    "parse_spec",
    "render_sql",
    "score",
    "source_relation",
]
