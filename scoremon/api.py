"""The library's entry points: load, check, compile, score, diff, baseline, monitor, bin and fit.

The CLI is a thin layer on these. This module is a face: each name is handed on from the module
that owns the job when it is first asked for (scoring from :mod:`scoremon.scoring`, the
monitoring run from :mod:`scoremon.monitor`, the impact of a change from :mod:`scoremon.diff`,
…), so ``scoremon check`` loads the spec's modules and nothing else.

>>> from scoremon import api
>>> spec = api.load_spec("tests/fixtures/small.yaml")
>>> "CASE" in api.compile_sql(spec, table="applications")
True
"""
from importlib import import_module

# public name → (module that owns it, its name there)
_OWNERS = {
    "DiffReport": (".diff", "DiffReport"),
    "History": (".monitor", "History"),
    "Impact": (".diff", "Impact"),
    "ModelDiff": (".diff", "ModelDiff"),
    "MonitorReport": (".monitor", "MonitorReport"),
    "ScoreResult": (".scoring", "ScoreResult"),
    "Thresholds": (".monitor", "Thresholds"),
    "compile_sql": (".scoring", "compile_sql"),
    "describe_source": (".sources", "describe_source"),
    "diff_models": (".diff", "diff_models"),
    "load_spec": (".spec", "load_spec"),
    "load_thresholds": (".monitor", "load_thresholds"),
    "measure_development": (".monitor", "measure_development"),
    "measure_impact": (".diff", "measure_impact"),
    "model_name_of": (".monitor", "model_name_of"),
    "monitor": (".monitor", "monitor_table"),
    "open_engine": (".engines", "open_engine"),
    "parse_month": (".monitor", "parse_month"),
    "read_history": (".monitor", "read_history"),
    "score": (".scoring", "score"),
    "source_relation": (".sources", "source_relation"),
    "write_spec_with_baseline": (".monitor", "write_spec_with_baseline"),
    # model development: bin and fit
    "BinReport": (".develop.binning", "BinReport"),
    "Binning": (".develop.binning_file", "Binning"),
    "FitReport": (".develop.records", "FitReport"),
    "FitSettings": (".develop.records", "FitSettings"),
    "Naming": (".develop.spec_writer", "Naming"),
    "Settings": (".develop.binning_file", "Settings"),
    "bin_development": (".develop.run", "bin_development"),
    "fit_development": (".develop.run", "fit_development"),
    "fit_spec": (".develop.run", "fit_spec"),
    "penalty_alpha": (".develop.fitting", "penalty_alpha"),
    "read_binning": (".develop.binning_file", "read_binning"),
    "recount_binning": (".develop.run", "recount_binning"),
    "write_binning": (".develop.binning_file", "write_binning"),
    "write_spec": (".develop.spec_writer", "write_spec"),
}

__all__ = sorted(_OWNERS)


def __getattr__(name: str):
    if name in _OWNERS:
        module, attribute = _OWNERS[name]
        value = getattr(import_module(module, "scoremon"), attribute)
        globals()[name] = value  # asked once, then an ordinary attribute
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
