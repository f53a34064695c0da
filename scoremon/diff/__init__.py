"""Semantic comparison of two model versions and the impact of the change on a population.

:func:`diff_models` (in :mod:`~scoremon.diff.changes`) turns two validated specs into typed
change records; :mod:`~scoremon.diff.impact` builds the one query that scores a population
under both versions and summarises its aggregates; :mod:`~scoremon.diff.population` runs it
through an engine (:func:`measure_impact`).
"""
from .changes import diff_models
from .impact import Impact, impact_query, summarise_impact
from .population import measure_impact
from .records import Change, ChangeKind, DiffReport, Effect, ModelDiff, ScoreMap, VersionInfo

__all__ = [
    "Change",
    "ChangeKind",
    "DiffReport",
    "Effect",
    "Impact",
    "ModelDiff",
    "ScoreMap",
    "VersionInfo",
    "diff_models",
    "impact_query",
    "measure_impact",
    "summarise_impact",
]
