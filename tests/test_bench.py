"""``scoremon bench`` runs end to end on a few rows and reports every comparison.

Functional only: no assertion here is about speed (speed is what the command prints, never
what a test checks).
"""
import math

import pytest

from scoremon.bench import BenchSettings, run_bench
from scoremon.bench.numpy_scorer import score_with_numpy
from scoremon.bench.queries import grade_summary, input_copy, relation
from scoremon.bench.workload import bench_spec, create_table, input_columns
from scoremon.cli import main
from scoremon.compiler import compile_model
from scoremon.spec.model import CategoricalFeature, LinearFeature, NumericFeature

EVERY_LINE = ["a0", "a", "b", "a+", "a-r", "c", "d0", "d1", "d", "f", "g", "h", "i", "i-sql", "j", "e", "k"]


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bench")
    return folder, run_bench(BenchSettings(rows=3_000, repeat=2, memory_rows=3_000, folder=str(folder)))


def test_bench_spec_has_the_documented_shape():
    spec = bench_spec()
    numeric = [f for f in spec.features if isinstance(f, NumericFeature)]
    categorical = [f for f in spec.features if isinstance(f, CategoricalFeature)]
    assert len(numeric) == 12 and all(6 <= len(f.bins) <= 10 for f in numeric)
    sizes = sorted(sum(len(g.values) for g in f.groups) + 1 for f in categorical)
    assert sizes == [5, 12, 30]
    assert sum(isinstance(f, LinearFeature) for f in spec.features) == 1
    assert spec.reasons.count == 3


def test_every_comparison_is_reported_with_both_sides_and_a_goal(report):
    _, report = report
    assert [line.key for line in report.lines] == EVERY_LINE
    for line in report.lines:
        assert math.isfinite(line.ratio) and line.ratio > 0, line
        assert line.first_value > 0, line
        if line.unit == "s":
            # (j) runs --fit-repeat rounds (1 by default): each side takes minutes at full size
            assert line.second_value > 0 and line.rounds == (1 if line.key == "j" else 2), line
    goals = {line.key: line.goal.text for line in report.lines if line.goal}
    ratio = {line.key: line.ratio for line in report.lines}
    assert goals == {"a": f"≤ 1.35 × (a0) = {1.35 * ratio['a0']:.2f}", "b": "≤ 0.8", "c": "≥ 10",
                     "d": f"≤ (d0) + (d1) + 0.5 = {ratio['d0'] + ratio['d1'] + 0.5:.2f}", "e": "< 2", "f": "≤ 2",
                     "g": "≤ 4", "h": "≤ 6", "i": "≤ 4", "j": "≥ 5", "k": "< 2"}
    assert all(isinstance(line.goal_met, bool) for line in report.lines if line.goal)
    lines = {line.key: line for line in report.lines}
    assert lines["e"].unit == "GiB" and "3,000 rows" in lines["e"].detail
    assert lines["k"].unit == "GiB" and lines["k"].detail.startswith("3,000 rows × 15 characteristics")


def test_numpy_route_agrees_with_compiled_scoring(report):
    _, report = report
    assert report.notes[0] == "numpy and compiled scoring agree on the rows in every grade"


def test_export_route_agrees_with_the_fit(report):
    # [lib] scikit-learn LogisticRegression (newton-cholesky) on the exported WoE design, the same
    # folds and λ grid, C = 1/(N·λ): the same λ chosen, the coefficients there within 1e-6 (the
    # issue's tolerance for L2 against scikit-learn)
    _, report = report
    line = next(line for line in report.lines if line.key == "j")
    assert line.detail.startswith("3,000 rows × 15 characteristics, L2, 5 folds, 20 λ; 1 round, no warm-up")
    assert "the same λ chosen: yes" in line.detail
    assert float(line.detail.rsplit(" ", 1)[1]) <= 1e-6
    assert not any("DISAGREE" in note for note in report.notes)


def test_temporary_data_is_removed(report):
    folder, _ = report
    assert list(folder.iterdir()) == []


def test_numpy_scorer_matches_the_compiled_grade_summary(engine):
    spec = bench_spec()
    engine.execute(create_table("input", 5_000), "generating rows")
    compiled = engine.query(grade_summary(compile_model(spec, relation("input"))), "scoring")
    frame = engine.query_frame(input_copy("input", input_columns()), "fetching")
    summary = score_with_numpy(spec, frame)
    assert summary.grades == tuple(row.grade for row in compiled)
    assert summary.rows == tuple(row.rows for row in compiled)
    assert sum(summary.rows) == 5_000
    for mine, theirs in zip(summary.mean_score, (row.mean_score for row in compiled)):
        assert mine == pytest.approx(theirs, rel=1e-12)
    for mine, theirs in zip(summary.mean_pd, (row.mean_pd for row in compiled)):
        assert mine == pytest.approx(theirs, rel=1e-9)


def test_cli_prints_every_line_and_its_verdict(tmp_path, capsys):
    code = main(["bench", "--rows", "2000", "--repeat", "1", "--skip-memory", "--folder", str(tmp_path)])
    printed = capsys.readouterr().out
    assert code in (0, 1)  # 1 when a goal is missed, which tiny inputs usually do
    for key in ["(a)", "(b)", "(a+)", "(a-r)", "(a0)", "(c)", "(d)", "(d0)", "(d1)", "(f)", "(g)", "(h)", "(i)", "(j)"]:
        assert key in printed
    assert "(e)" not in printed and "(k)" not in printed
    assert ("missed" in printed) == (code == 1)
    assert list(tmp_path.iterdir()) == []


def test_cli_refuses_nonsense_sizes(capsys):
    assert main(["bench", "--rows", "0", "--skip-memory"]) == 2
    assert "rows must be at least 1" in capsys.readouterr().err
    assert main(["bench", "--fit-repeat", "0", "--skip-memory"]) == 2
    assert "fit repeat must be at least 1, not 0" in capsys.readouterr().err


def test_cli_help_describes_the_fitting_options(capsys):
    with pytest.raises(SystemExit):
        main(["bench", "--help"])
    printed = " ".join(capsys.readouterr().out.split())
    assert "--fit-repeat FIT_REPEAT timed rounds of line (j), bin + fit end to end ÷ the export route" in printed
    assert "run only the fitting lines (i), (i-sql), (j) and, unless --skip-memory, (k)" in printed
