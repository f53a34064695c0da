"""Never crash on hostile input: a YAML file that asks for unbounded time or memory (an alias
bomb, deep nesting, a huge file) is refused before the document is built, with one located
line naming the limit; long values are cut in messages.

The alias bomb is the "billion laughs" shape (nested anchors, each list repeating the one
before: common practice in YAML and XML parser hardening).
"""
from __future__ import annotations

import re
from pathlib import Path

import pytest

from scoremon.cli import main
from scoremon.spec import limits

SMALL = Path("tests/fixtures/small.yaml").read_text()


def alias_bomb(levels: int = 7) -> str:
    lines = ['a0: &a0 ["lol", "lol", "lol", "lol", "lol", "lol", "lol", "lol", "lol"]']
    for k in range(1, levels):
        lines.append(f"a{k}: &a{k} [" + ", ".join([f"*a{k - 1}"] * 9) + "]")
    lines.append("bomb: [" + ", ".join([f"*a{levels - 1}"] * 4) + "]")
    return SMALL + "\n" + "\n".join(lines) + "\n"


def check(tmp_path, text: str, capsys) -> tuple[int, list[str]]:
    path = tmp_path / "spec.yaml"
    path.write_text(text)
    code = main(["check", str(path)])
    out, err = capsys.readouterr()
    return code, err.strip().splitlines()


def test_an_alias_bomb_is_refused_with_the_limit(tmp_path, capsys):
    text = alias_bomb()
    # the bomb expands to 4 × 9^7 ≈ 19 million values, from a file of a few hundred bytes beyond the spec
    assert len(text) - len(SMALL) < 1_000
    code, lines = check(tmp_path, text, capsys)
    assert code == 2
    assert len(lines) == 1, lines
    assert re.match(rf"^{re.escape(str(tmp_path))}/spec.yaml:\d+:\d+: ", lines[0]), lines[0]
    assert f"more than {limits.MAX_VALUES:,} values" in lines[0]


def test_an_alias_that_contains_itself_is_refused(tmp_path, capsys):
    code, lines = check(tmp_path, SMALL + "\nloop: &loop [1, *loop]\n", capsys)
    assert code == 2
    assert len(lines) == 1 and "refers to the list or mapping that holds it" in lines[0], lines


@pytest.mark.parametrize("style", ["block", "flow"])
def test_deep_nesting_is_refused_with_the_limit(tmp_path, capsys, style):
    depth = 500
    if style == "flow":
        nested = "[" * depth + "1" + "]" * depth
    else:
        nested = "\n" + "".join("  " * k + f"k{k}:\n" for k in range(depth)) + "  " * depth + "1"
    code, lines = check(tmp_path, SMALL + "\ndeep: " + nested + "\n", capsys)
    assert code == 2
    assert len(lines) == 1, lines[:3]
    assert re.match(rf"^{re.escape(str(tmp_path))}/spec.yaml:\d+:\d+: ", lines[0]), lines[0]
    assert f"nested more than {limits.MAX_DEPTH} levels deep" in lines[0]


def test_a_huge_file_is_refused_before_it_is_read(tmp_path, capsys):
    code, lines = check(tmp_path, SMALL + "\n# " + "x" * limits.MAX_FILE_BYTES + "\n", capsys)
    assert code == 2
    assert len(lines) == 1
    assert lines[0].startswith(f"{tmp_path}/spec.yaml:1:1: ")
    assert f"larger than {limits.MAX_FILE_BYTES // 2**20} MiB" in lines[0]


def test_a_thresholds_file_is_held_to_the_same_limits(tmp_path, capsys):
    bomb = tmp_path / "thresholds.yaml"
    bomb.write_text(alias_bomb().replace(SMALL, ""))
    code = main(["monitor", "tests/fixtures/small.yaml", "--db", str(tmp_path / "none.duckdb"), "--table", "t",
                 "--month-column", "m", "--thresholds", str(bomb)])
    err = capsys.readouterr().err
    assert code == 2
    assert f"more than {limits.MAX_VALUES:,} values" in err


def test_a_number_5000_digits_long_is_cut_in_the_message(tmp_path, capsys):
    code, lines = check(tmp_path, re.sub(r"(?m)^intercept: .*$", "intercept: " + "9" * 5000, SMALL), capsys)
    assert code == 2
    assert len(lines) == 1
    assert "intercept" in lines[0] and "…" in lines[0]
    assert len(lines[0]) < len(str(tmp_path)) + 200


def test_long_values_in_a_thresholds_file_are_cut(tmp_path, capsys):
    thresholds = tmp_path / "thresholds.yaml"
    # a key longer than 1024 characters must be written as an explicit key (`? key`), YAML's rule
    thresholds.write_text(f"score_psi: {{watch: '{'9' * 5000}'}}\n? {'k' * 5000}\n: {{watch: 1}}\n")
    code = main(["monitor", "tests/fixtures/small.yaml", "--db", str(tmp_path / "none.duckdb"), "--table", "t",
                 "--month-column", "m", "--thresholds", str(thresholds)])
    lines = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    # a headline, then one line per problem (InputError keeps its problems as a list)
    assert lines[0] == "error: the thresholds do not fit"
    problems = lines[1:]
    assert len(problems) == 2 and all("…" in line and len(line) < len(str(thresholds)) + 300 for line in problems), lines
