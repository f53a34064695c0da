"""The change report's points per changed characteristic: pieces of the common refinement of
two versions' bins, joined where both versions keep the same bins."""
from __future__ import annotations

from scoremon.api import diff_models
from scoremon.report.html.diff import _feature_rows
from scoremon.spec.terms import feature_terms
from tests.diff.specs import base, feature, variant


def test_pieces_in_the_same_old_and_new_bins_are_joined():
    def move_edge(data):
        bins = feature(data, "tenure")["bins"]
        bins[0]["upper"], bins[1]["lower"] = 3, 3  # (-inf, 2] (2, 8] → (-inf, 3] (3, 8]

    old, new = base(), variant(move_edge)
    assert "tenure" in diff_models(old, new).changed_features
    rows = _feature_rows(old, new, old.features[3], new.features[3])
    points = {b.label: b.points for b in feature_terms(old, old.features[3]).bins}
    # closed: upper, so each edge belongs to the interval below it: (-inf, 2] keeps short in both
    # versions; (2, 3] moves from medium to short; (3, 8] stays medium; (8, inf) stays long
    assert rows == [
        ("(-inf, 2]", points["short"], points["short"]),
        ("(2, 3]", points["medium"], points["short"]),
        ("(3, 8]", points["medium"], points["medium"]),
        ("(8, inf)", points["long"], points["long"]),
        ("missing (NULL)", points["unknown"], points["unknown"]),
    ]


def test_a_removed_feature_shows_its_bins_on_the_old_side_only():
    def remove_tenure(data):
        data["features"].pop(3)
        data["reasons"]["statements"][2]["features"] = ["utilisation"]

    old, new = base(), variant(remove_tenure)
    rows = _feature_rows(old, new, old.features[3], None)
    assert [r[0] for r in rows] == ["old: short", "old: medium", "old: long", "old: unknown"]
    assert all(r[2] is None for r in rows) and [r[1] for r in rows] == [-10, 4, 12, -6]
