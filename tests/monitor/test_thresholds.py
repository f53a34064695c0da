"""Thresholds: the shipped file equals the defaults; overrides; errors that name the file and key."""
from __future__ import annotations

import pytest
import yaml

from scoremon.errors import InputError
from scoremon.monitor.thresholds import DEFAULT_THRESHOLDS, Limit, load_thresholds, worst
from tests.conftest import ROOT


def test_the_shipped_config_is_the_defaults():
    data = yaml.safe_load((ROOT / "configs" / "thresholds.yaml").read_text())
    assert data == DEFAULT_THRESHOLDS.as_dict()
    assert load_thresholds(ROOT / "configs" / "thresholds.yaml") == DEFAULT_THRESHOLDS


def test_psi_bands_are_the_common_ones():
    # common practice (CHECKS.md §3): 0.10 / 0.25
    assert (DEFAULT_THRESHOLDS.score_psi.watch, DEFAULT_THRESHOLDS.score_psi.alert) == (0.10, 0.25)


def test_a_file_overrides_only_the_keys_it_gives(tmp_path):
    path = tmp_path / "t.yaml"
    path.write_text("score_psi: {alert: 0.4}\nvolume_drop: {watch: 0.2, alert: 0.3}\n")
    thresholds = load_thresholds(path)
    assert thresholds.score_psi == Limit(0.10, 0.4)
    assert thresholds.volume_drop == Limit(0.2, 0.3)
    assert thresholds.auc_drop == DEFAULT_THRESHOLDS.auc_drop


@pytest.mark.parametrize("text, message", [
    ("score_pis: {watch: 0.1}", "score_pis: unknown threshold; did you mean 'score_psi'?"),
    ("score_psi: {watch: 0.3}", r"score_psi: alert \(0.25\) must be at or above watch \(0.3\)"),
    ("calibration_p_value: {watch: 0.001, alert: 0.05}", "a smaller p-value is worse"),
    ("score_psi: {watch: high}", r"score_psi.watch: 'high' is not a number"),
    ("score_psi: 0.2", "give a mapping with watch and/or alert"),
    ("psi_confidence: {watch: 95, alert: 99}", "levels are probabilities"),
    ("- a list", "expected a mapping"),
    ("score_psi: {watch: 0.1, alert 0.2: }}", r"t.yaml:\d+:\d+: not valid YAML"),
])
def test_bad_files_are_input_errors_naming_the_file(tmp_path, text, message):
    path = tmp_path / "t.yaml"
    path.write_text(text + "\n")
    with pytest.raises(InputError, match=message) as raised:
        load_thresholds(path)
    assert str(path) in str(raised.value)


def test_a_missing_file_is_an_input_error(tmp_path):
    with pytest.raises(InputError, match="no such thresholds file"):
        load_thresholds(tmp_path / "nope.yaml")


def test_statuses():
    limit = Limit(0.10, 0.25)
    assert [limit.status(v) for v in (0.05, 0.10, 0.2, 0.25, None)] == ["ok", "watch", "watch", "alert", None]
    p_values = Limit(0.05, 0.001, higher_is_worse=False)
    assert [p_values.status(v) for v in (0.5, 0.04, 0.0005)] == ["ok", "watch", "alert"]
    assert worst("ok", None, "watch") == "watch" and worst(None, None) is None
