"""The demo's version 2 makes the changes its header promises, and reads only book columns."""
from __future__ import annotations

import math

import pytest

from demo_warehouse import generate
from demo_warehouse.run import DIFF_CUTOFF, SPEC_V1, SPEC_V2
from scoremon import api
from scoremon.diff import ChangeKind, Effect, diff_models
from scoremon.spec import load_spec


def test_version_2_rebins_drops_adds_recalibrates_and_remaps_reasons():
    diff = diff_models(load_spec(SPEC_V1), load_spec(SPEC_V2))
    found = {(c.kind, c.feature or c.subject) for c in diff.changes}
    assert (ChangeKind.EDGES_MOVED, "monthly_income") in found
    assert (ChangeKind.FEATURE_REMOVED, "channel") in found
    assert (ChangeKind.FEATURE_ADDED, "open_accounts") in found
    assert (ChangeKind.INTERCEPT_CHANGED, "intercept") in found
    assert {(ChangeKind.REASON_FEATURES_CHANGED, "reason R01"), (ChangeKind.REASON_TEXT_CHANGED, "reason R01")} <= found
    assert {(ChangeKind.REASON_REMOVED, "reason R02"), (ChangeKind.REASON_REMOVED, "reason R10")} <= found
    assert (ChangeKind.REASON_ADDED, "reason R12") in found
    assert diff.effect is Effect.STRUCTURE
    # nothing else moved: every other feature, the scaling and the grades are version 1's
    touched = {c.feature for c in diff.changes if c.feature}
    assert touched == {"monthly_income", "channel", "open_accounts"}, (
        "spec_v2.yaml should copy version 1's other features as they are; carry spec_v1.yaml's numbers over to "
        f"{sorted(touched - {'monthly_income', 'channel', 'open_accounts'})}")
    assert not [c for c in diff.changes if c.kind in (ChangeKind.SCALING_CHANGED, ChangeKind.GRADE_BOUNDS_CHANGED)]


def test_the_demo_cut_off_is_the_edge_of_the_grades_sent_to_an_underwriter():
    # version 1 sends grades F and G to an underwriter; scores are whole points, so the lowest
    # accepted score is the E/F edge rounded up
    v1 = load_spec(SPEC_V1)
    assert "grades F and G" in " ".join(v1.model.intended_use.split())
    edge = next(g.lower for g in v1.grades if g.name == "E")
    assert v1.scaling.rounding == "per_bin" and DIFF_CUTOFF == math.ceil(edge)
    assert sorted(g.name for g in v1.grades if g.upper <= edge) == ["F", "G"]


@pytest.fixture(scope="module")
def small_book(tmp_path_factory):
    database = tmp_path_factory.mktemp("demo-book") / "book.duckdb"
    generate.build_warehouse(database, generate.MIN_ROWS)
    return database


def test_version_2_scores_the_demo_book(small_book):
    engine = api.open_engine(str(small_book))
    try:
        impact = api.measure_impact(load_spec(SPEC_V1), load_spec(SPEC_V2), engine,
                                    api.source_relation(table=generate.APPLICATIONS), "demo book",
                                    generate.OUTCOME_COLUMN, DIFF_CUTOFF)
    finally:
        engine.close()
    assert impact.rows == generate.MIN_ROWS
    assert sum(cell.rows for cell in impact.swap_set.cells) == generate.MIN_ROWS
    assert impact.rows_with_outcome > 0
