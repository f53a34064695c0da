"""`scoremon check` run in-process: exit codes and the lines it prints."""
from pathlib import Path

import pytest

from scoremon.cli import main
from scoremon.spec import fingerprint, load_spec

FIXTURES = Path(__file__).resolve().parent / "fixtures"


def test_valid_spec_prints_ok_and_exits_0(capsys):
    path = FIXTURES / "small.yaml"
    assert main(["check", str(path)]) == 0
    out, err = capsys.readouterr()
    assert out.splitlines() == [f"ok {path}: small_test_model version 3, 3 features, 3 grades, rounding none, "
                                f"PD from the exact log-odds, fingerprint {fingerprint(load_spec(path))}"]
    assert err == ""


def test_broken_spec_prints_one_line_per_problem_and_exits_2(capsys):
    path = FIXTURES / "broken" / "several_problems.yaml"
    assert main(["check", str(path)]) == 2
    out, err = capsys.readouterr()
    assert out == ""
    assert err.splitlines() == [
        f"{path}:15:13: scaling.rounding: 'nearest' is not allowed; use 'none', 'per_bin' or 'total'",
        f"{path}:22:10: features[0].bins[1].lower: nothing covers 25 to 30: bins[0] ends at 25; "
        "set this lower edge to 25",
        f"{path}:29:48: features[1].groups[1].log_odds: expected a number, got 'low'",
        f"{path}:33:15: grades[0].lower: nothing covers 590 to 600: grades[1] ends at 590; set this lower edge to 590",
        f"{path}:36:3: reasons.count: asks for 5 reasons but 2 statements are declared; "
        "lower count to 2 or add statements",
    ]


@pytest.mark.parametrize("name, expected", [
    ("yaml_syntax", "22:9: not valid YAML: expected ',' or '}', but got '{' (in a flow mapping that starts at "
                    "line 21, column 9); close the bracket or add the missing comma"),
    ("empty", "1:1: the file is empty; a spec needs at least model, intercept, scaling, features and grades"),
    ("top_level_not_mapping", "2:1: the top level is a list, not a mapping; start the file with keys such as "
                              "`model:` and `features:`"),
])
def test_unreadable_spec_prints_its_place_and_exits_2(capsys, name, expected):
    path = FIXTURES / "broken" / f"{name}.yaml"
    assert main(["check", str(path)]) == 2
    out, err = capsys.readouterr()
    assert (out, err) == ("", f"{path}:{expected}\n")


def test_missing_file_exits_2_without_a_traceback(capsys, tmp_path):
    path = tmp_path / "absent.yaml"
    assert main(["check", str(path)]) == 2
    out, err = capsys.readouterr()
    assert (out, err) == ("", f"{path}:1:1: no such file; check the path\n")


def test_check_without_a_spec_is_a_usage_error(capsys):
    with pytest.raises(SystemExit) as caught:
        main(["check"])
    assert caught.value.code == 2
    assert "spec" in capsys.readouterr().err
