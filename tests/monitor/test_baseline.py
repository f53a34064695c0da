"""The baseline: measured in the engine, written into a new spec file that keeps every other line."""
from __future__ import annotations

import math

import numpy as np
import pytest
from sklearn.metrics import roc_auc_score

from scoremon import api, files
from scoremon.errors import InputError
from scoremon.spec import fingerprint, load_spec
from tests.monitor.book import SPEC_PATH, load_book, make_book
from tests.sql import fetched, tree


@pytest.fixture
def development(engine):
    book = make_book(months=4, rows_per_month=250, seed=21)
    load_book(engine, "development", book)
    return book


def test_baseline_shares_volume_and_discrimination(engine, development):
    spec = load_spec(SPEC_PATH)
    baseline = api.measure_development(spec, engine, api.source_relation(table="development"), "bad",
                                       "application_month", "table development")
    assert baseline.rows == 1000 and baseline.rows_per_month == 250
    assert baseline.event_rate == pytest.approx(development["bad"].mean())
    scored = api.score(spec, engine, api.source_relation(table="development"), keys=("bad",), out_table="scored")
    frame = engine.query_frame(tree('SELECT * FROM "scored"'), "reading the scored rows")
    # [lib] AUC against scikit-learn on the negated score
    assert baseline.auc == pytest.approx(roc_auc_score(frame["bad"], -frame["score"]), abs=1e-12)
    assert baseline.mean_score == pytest.approx(frame["score"].mean(), rel=1e-12)
    for feature, shares in baseline.feature_shares.items():
        assert sum(shares.values()) == pytest.approx(1.0)
        counts = frame[f"{feature}_bin"].value_counts(normalize=True)
        for label, share in shares.items():
            assert share == pytest.approx(counts.get(label, 0.0))
    assert baseline.unseen_rate["region"] == pytest.approx((development["region_code"] == "Z9").mean())
    assert scored.rows == 1000


def test_score_bands_are_deciles_of_the_development_score(engine, development):
    spec = load_spec(SPEC_PATH)
    baseline = api.measure_development(spec, engine, api.source_relation(table="development"))
    bands = baseline.score_bands
    assert len(bands) == 10 and bands[0].lower == -math.inf and bands[-1].upper == math.inf
    assert all(a.upper == b.lower for a, b in zip(bands, bands[1:]))
    api.score(spec, engine, api.source_relation(table="development"), out_table="scored", replace=True)
    scores = np.sort(np.array([r[0] for r in fetched(engine, 'SELECT score FROM "scored"', "scores")]))
    for k, band in enumerate(bands[1:], start=1):
        # the edge is the lowest score with at least k/10 of the rows strictly below it
        below = np.searchsorted(scores, band.lower, side="left")
        assert below >= k * len(scores) / 10
        assert np.searchsorted(scores, scores[below - 1], side="left") < k * len(scores) / 10
    assert sum(b.share for b in bands) == pytest.approx(1.0)
    assert baseline.event_rate is None and baseline.auc is None and baseline.rows_per_month is None


def test_tied_scores_merge_repeated_edges(engine):
    # with region and utilisation held fixed only age's four bins move the score: four score
    # values, so at most four bands, and never an empty one
    book = make_book(months=1, rows_per_month=400, seed=4)
    book["region_code"] = "N1"
    book["utilisation"] = 0.5
    load_book(engine, "development", book)
    baseline = api.measure_development(load_spec(SPEC_PATH), engine, api.source_relation(table="development"))
    assert 2 <= len(baseline.score_bands) <= 4
    assert all(b.share > 0 for b in baseline.score_bands)


def test_the_new_spec_keeps_every_other_line_and_the_fingerprint(engine, development, tmp_path):
    spec = load_spec(SPEC_PATH)
    baseline = api.measure_development(spec, engine, api.source_relation(table="development"), "bad",
                                       "application_month", "table development")
    written = api.write_spec_with_baseline(SPEC_PATH, baseline, tmp_path / "with_baseline.yaml")
    text = written.read_text()
    assert text.startswith(SPEC_PATH.read_text())  # the original lines, comments included, come first
    reloaded = load_spec(written)
    assert fingerprint(reloaded) == fingerprint(spec)
    assert reloaded.baseline == baseline  # floats round-trip through YAML exactly

    # writing again replaces the section instead of adding a second one
    again = api.write_spec_with_baseline(written, baseline.model_copy(update={"rows": 999}), tmp_path / "again.yaml")
    assert again.read_text().count("\nbaseline:") == 1
    assert load_spec(again).baseline.rows == 999


def test_a_baseline_section_in_the_middle_is_replaced_in_place(engine, development, tmp_path):
    spec = load_spec(SPEC_PATH)
    baseline = api.measure_development(spec, engine, api.source_relation(table="development"))
    lines = SPEC_PATH.read_text().split("grades:")
    middle = tmp_path / "middle.yaml"
    middle.write_text(lines[0] + "baseline:\n  rows: 5\n  # old note\n\n# Grades comment\ngrades:" + lines[1])
    written = api.write_spec_with_baseline(middle, baseline, tmp_path / "out.yaml")
    text = written.read_text()
    assert "rows: 5" not in text and "# old note" not in text
    assert "# Grades comment\ngrades:" in text
    assert load_spec(written).baseline.rows == 1000


def test_the_spec_itself_is_never_overwritten(engine, development, tmp_path):
    copy = tmp_path / "spec.yaml"
    copy.write_text(SPEC_PATH.read_text())
    baseline = api.measure_development(load_spec(copy), engine, api.source_relation(table="development"))
    with pytest.raises(InputError, match="is the spec itself; a spec is never overwritten in place"):
        api.write_spec_with_baseline(copy, baseline, tmp_path / "." / "spec.yaml")
    assert copy.read_text() == SPEC_PATH.read_text()
    with pytest.raises(InputError, match="folder .* does not exist"):
        api.write_spec_with_baseline(copy, baseline, tmp_path / "missing" / "out.yaml")


def test_no_partial_file_is_left_when_writing_fails(engine, development, tmp_path, monkeypatch):
    baseline = api.measure_development(load_spec(SPEC_PATH), engine, api.source_relation(table="development"))

    def refuse(*args):
        raise OSError("disk full")

    monkeypatch.setattr(files.os, "replace", refuse)
    with pytest.raises(InputError, match="cannot write .*out.yaml: disk full; nothing was written"):
        api.write_spec_with_baseline(SPEC_PATH, baseline, tmp_path / "out.yaml")
    assert list(tmp_path.iterdir()) == []


def test_an_empty_development_table_is_refused(engine):
    load_book(engine, "development", make_book(months=1, rows_per_month=10, seed=1).iloc[0:0])
    with pytest.raises(InputError, match="no rows to compute a baseline from"):
        api.measure_development(load_spec(SPEC_PATH), engine, api.source_relation(table="development"),
                                computed_from="table development")
