"""The binning file (scoremon.develop.binning_file): written whole, read back typed, errors at file:line."""
from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from scoremon.develop.binning_file import read_binning, read_binning_text, write_binning
from scoremon.errors import InputError, SpecError
from scoremon.spec import parse_spec

FIXTURE = Path(__file__).resolve().parent.parent / "fixtures" / "binning.yaml"
SPEC_HEAD = {"model": {"name": "m", "version": "1", "owner": "o", "effective_date": "2026-01-01",
                       "intended_use": "test", "event": "bad", "performance_window_months": 12},
             "intercept": -2.0, "scaling": {"base_score": 600, "base_odds": 50, "pdo": 20},
             "grades": [{"name": "all", "lower": float("-inf"), "upper": float("inf")}]}


def test_round_trip_keeps_every_number(tmp_path):
    binning = read_binning(FIXTURE)
    out = write_binning(binning, tmp_path / "again.yaml")
    again = read_binning(out)
    assert again.features == binning.features
    assert again.fingerprint == binning.fingerprint
    assert (again.rows, again.events, again.key, again.settings) == (1000, 100, "application_id", binning.settings)


def test_each_feature_is_a_spec_feature_once_statistics_go_and_a_coefficient_comes():
    # The contract's rule, checked with the spec loader itself.
    data = yaml.safe_load(FIXTURE.read_text())
    features = []
    for feature in data["features"]:
        feature.pop("iv")
        for key in ("bins", "groups"):
            for item in feature.get(key, []):
                for stat in ("rows", "events", "event_rate", "iv"):
                    item.pop(stat)
        for key in ("other", "missing"):
            if key in feature:
                for stat in ("rows", "events", "event_rate", "iv"):
                    feature[key].pop(stat)
        feature["coefficient"] = -0.8
        features.append(feature)
    spec = parse_spec(yaml.safe_dump({**SPEC_HEAD, "features": features}))
    assert [f.name for f in spec.features] == ["bureau_score", "housing"]
    # and the typed feature fit receives gives the same spec feature
    binned = read_binning(FIXTURE).features[0]
    assert binned.spec_feature(-0.8) == spec.features[0]


def test_existing_file_is_kept_unless_replace(tmp_path):
    binning = read_binning(FIXTURE)
    target = tmp_path / "bins.yaml"
    target.write_text("precious\n")
    with pytest.raises(InputError, match="exists; give --replace to replace it, or choose another name"):
        write_binning(binning, target)
    assert target.read_text() == "precious\n"
    write_binning(binning, target, replace=True)
    assert read_binning(target).fingerprint == binning.fingerprint
    assert [p.name for p in tmp_path.iterdir()] == ["bins.yaml"]  # no temporary file left behind


def _edited(old: str, new: str) -> str:
    text = FIXTURE.read_text()
    assert old in text
    return text.replace(old, new)


def _line_of(text: str, needle: str) -> int:
    return next(i for i, line in enumerate(text.splitlines(), 1) if needle in line)


def test_overlapping_edited_edge_is_located():
    text = _edited("{lower: 620, upper: .inf", "{lower: 600, upper: .inf")
    with pytest.raises(SpecError) as caught:
        read_binning_text(text, "edited.yaml", counted=False)
    line = _line_of(text, "lower: 600")
    assert str(caught.value).startswith(f"edited.yaml:{line}:")
    assert "overlaps bins[1], which runs to 620" in str(caught.value)


def test_category_in_two_groups_is_located():
    text = _edited("values: [owner, family]", "values: [owner, renting]")
    with pytest.raises(SpecError) as caught:
        read_binning_text(text, "edited.yaml", counted=False)
    assert f"edited.yaml:{_line_of(text, 'owner, renting')}:" in str(caught.value)
    assert "category 'renting' is already in group 'renting'" in str(caught.value)


def test_stale_woe_is_refused_when_counted_but_not_for_a_recount():
    # one event moved from the first bin to the second, WoE left as it was
    text = _edited("rows: 400, events: 30", "rows: 400, events: 31").replace("rows: 300, events: 60",
                                                                             "rows: 300, events: 59")
    with pytest.raises(SpecError) as caught:
        read_binning_text(text, "stale.yaml")
    assert "recount the file with scoremon bin --recount" in str(caught.value)
    assert f"stale.yaml:{_line_of(text, 'events: 31')}:" in str(caught.value)
    read_binning_text(text, "stale.yaml", counted=False)  # a recount takes it as it is
    totals = _edited("rows: 400, events: 30", "rows: 400, events: 31")
    with pytest.raises(SpecError, match="hold 1000 rows and 101 events, the table 1000 and 100"):
        read_binning_text(totals, "totals.yaml")


def test_merged_bins_without_numbers_read_for_a_recount():
    text = FIXTURE.read_text().splitlines()
    start = _line_of(FIXTURE.read_text(), "{lower: -.inf, upper: 540")
    text[start - 1] = "      - {lower: -.inf, upper: 620}"
    del text[start]  # the 540–620 bin merged into the first
    binning = read_binning_text("\n".join(text), "merged.yaml", counted=False)
    assert [(b.lower, b.upper) for b in binning.features[0].feature.bins] == [(float("-inf"), 620), (620, float("inf"))]


def test_unknown_keys_and_a_coefficient_are_located():
    text = _edited("    type: categorical\n", "    type: categorical\n    coefficient: 1.2\n    colour: red\n")
    with pytest.raises(SpecError) as caught:
        read_binning_text(text, "odd.yaml", counted=False)
    message = str(caught.value)
    assert f"odd.yaml:{_line_of(text, 'coefficient: 1.2')}:" in message and "holds no coefficient" in message
    assert f"odd.yaml:{_line_of(text, 'colour: red')}:" in message
