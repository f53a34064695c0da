"""scoremon: logistic-regression scoring models kept as YAML specs, compiled to SQL, monitored.

The public library mirrors the command line::

    from scoremon import load_spec, compile_sql, open_engine, source_relation, score

The face hands each name on from the module that owns it when the name is first asked for, so
``import scoremon`` (and ``scoremon --help``) loads no engine driver, pandas or scipy.
"""
from importlib import import_module

__version__ = "0.1.0"

# public name → the module that owns it
_OWNERS = {
    "EngineError": ".errors",
    "InputError": ".errors",
    "Problem": ".errors",
    "ScoreResult": ".api",
    "ScoremonError": ".errors",
    "SpecError": ".errors",
    "canonical_form": ".spec",
    "compile_model": ".compiler",
    "compile_sql": ".api",
    "fingerprint": ".spec",
    "load_spec": ".spec",
    "open_engine": ".engines",
    "parse_spec": ".spec",
    "render_sql": ".dialects",
    "score": ".api",
    "source_relation": ".sources",
}

__all__ = sorted(_OWNERS)


def __getattr__(name: str):
    if name in _OWNERS:
        value = getattr(import_module(_OWNERS[name], __name__), name)
        globals()[name] = value  # asked once, then an ordinary attribute
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
