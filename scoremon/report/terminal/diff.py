"""The terminal view of ``scoremon diff``: the two versions, the list of changes with how each
can affect a score, what happens to every score, then the impact on a population.

Fits 80 columns: long change descriptions wrap inside their column, and the grade migration
matrix shows percentages of each old grade's rows (counts are in the JSON and Markdown).
"""
from __future__ import annotations

from rich.table import Table
from rich.text import Text

from . import Indented, out, print_cautions

EFFECT_STYLE = {"none": "dim", "scaling_only": "cyan", "one_feature": "yellow", "structure": "bold red"}
EFFECT_MEANING = {
    "none": "no score or PD can move",
    "scaling_only": "only the intercept or scaling changed; order of rows kept",
    "one_feature": "one feature's contribution changed",
    "structure": "features added or removed, or several features changed",
}
SWAP_WORDS = {"accepted_by_both": "accepted by both", "swap_in": "swap-in (declined → accepted)",
              "swap_out": "swap-out (accepted → declined)", "declined_by_both": "declined by both"}
FOLD_AFTER = 4  # value changes shown per feature before the rest fold into one line


def _table(*columns: tuple[str, str]) -> Table:
    table = Table(show_edge=False, pad_edge=False, box=None, header_style="bold", padding=(0, 1))
    for name, justify in columns:
        table.add_column(name, justify=justify, overflow="fold")
    return table


def _effect(value: str) -> Text:
    return Text(value.replace("_", " "), style=EFFECT_STYLE.get(value, ""))


def _bar(share: float, width: int = 20) -> str:
    return "#" * max(1, round(width * share)) if share > 0 else ""


def _pct(share: float | None, digits: int = 1) -> str:
    return "–" if share is None else f"{share:.{digits}%}"


def _folded(changes, keep: int = FOLD_AFTER):
    """(change, 0) for each change shown, and (last change, n) where a feature's value changes
    beyond ``keep`` are folded into one line; a re-binned feature can list dozens."""
    shown: dict[str, int] = {}
    total: dict[str, int] = {}
    for change in changes:
        if change.kind.value == "bin_value_changed":
            total[change.feature] = total.get(change.feature, 0) + 1
    for change in changes:
        if change.kind.value != "bin_value_changed" or total[change.feature] <= keep + 1:
            yield change, 0
            continue
        shown[change.feature] = shown.get(change.feature, 0) + 1
        if shown[change.feature] <= keep:
            yield change, 0
        elif shown[change.feature] == total[change.feature]:
            yield change, total[change.feature] - keep


def print_diff(report) -> None:
    """Print a :class:`~scoremon.diff.records.DiffReport`: the versions, the changes, the
    impact when a population was given, and the cautions."""
    diff = report.diff
    view = _View(0)
    view.emit(Text.assemble(("diff", "bold"), f"  {diff.old.name} {diff.old.version} → "
                            f"{diff.new.name} {diff.new.version}"), extra=0)
    for side, info in (("old", diff.old), ("new", diff.new)):
        line = Text.assemble((side, "bold"), f"  version {info.version}, fingerprint {info.fingerprint}",
                             f", {info.source}" if info.source else "")
        line.overflow = "fold"
        view.emit(line)
    if diff.is_equivalent:
        view.emit(Text.assemble(("no change", "bold green"),
                                ": the two specs are the same model (equal fingerprints)"))
    else:
        view.emit(Text.assemble(("class ", "bold"), _effect(diff.effect.value),
                                f" — {EFFECT_MEANING[diff.effect.value]}"))
    out.print()
    print_diff_details(report)
    print_cautions()


def print_diff_details(report, indent: int = 0, brief: bool = False) -> None:
    """The changes, what they do to every score, and the impact, indented by ``indent``
    (the demo shows them under its step heading); ``brief`` leaves out the histograms of
    the score and PD change, keeping their one-line summaries."""
    diff, impact = report.diff, report.impact
    view = _View(indent, brief)
    if diff.changes:
        view.title(f"changes ({len(diff.changes)})")
        table = _table(("effect", "left"), ("change", "left"))
        table.columns[0].no_wrap = True
        for change, folded in _folded(diff.changes):
            if folded:
                table.add_row("", Text(f"… and {folded} more value changes of {change.feature} "
                                       "(each one is in the --json and --markdown output)", style="dim"))
            else:
                table.add_row(_effect(change.effect.value), change.summary)
        view.emit(table)
        out.print()
    if diff.score_map is not None and not diff.is_equivalent:
        view.emit(Text.assemble(("every score: ", "bold"), diff.score_map.summary))
        out.print()
    for note in diff.notes:
        view.emit(Text(f"note: {note}", style="dim"))
    if diff.notes:
        out.print()
    if impact is not None:
        view.impact(impact)


class _View(Indented):
    """The diff's blocks, indented by a base amount; ``brief`` leaves out the long tables."""

    def __init__(self, base: int, brief: bool = False):
        super().__init__(base)
        self.brief = brief

    def title(self, words: str) -> None:
        self.emit(Text(words, style="bold"))

    def impact(self, impact) -> None:
        known = ""
        if impact.outcome:
            known = (f"; outcome {impact.outcome!r} known for {impact.rows_with_outcome:,} rows "
                     f"(event rate {_pct(impact.event_rate, 2)})")
        self.emit(Text.assemble(("impact", "bold"), f" on {impact.population}: {impact.rows:,} rows{known}"),
                  extra=0)
        spearman = "–" if impact.spearman is None else f"{impact.spearman:.4f}"
        self.emit(Text(f"mean score {impact.mean_score_old:.2f} → {impact.mean_score_new:.2f}; "
                       f"mean PD {impact.mean_pd_old:.2%} → {impact.mean_pd_new:.2%}; "
                       f"Spearman rank correlation of old and new scores {spearman}"))
        out.print()
        self.distribution("score change (new − old, points)", impact.score_change, 1.0)
        self.distribution("PD change (new − old, percentage points)", impact.pd_change, 100.0)
        self.migration(impact.migration, impact.rows)
        if impact.swap_set is not None:
            self.swap(impact.swap_set, impact.outcome is not None)
        first = impact.first_reason
        moves = ", ".join(f"{a or '(none)'} → {b or '(none)'} {n:,}" for a, b, n in first.top_moves)
        self.emit(Text.assemble(("first reason", "bold"),
                                f" changes for {first.rows_changed:,} rows ({_pct(first.share_changed)})"
                                + (f"; most often {moves}" if moves else "")))
        out.print()

    def distribution(self, title: str, distribution, scale: float) -> None:
        self.title(title)
        if not self.brief:
            table = _table(("band", "left"), ("rows", "right"), ("share", "right"), ("", "left"))
            for band in distribution.bands:
                if band.rows:
                    table.add_row(band.label, f"{band.rows:,}", _pct(band.share), _bar(band.share))
            self.emit(table)
        q = distribution.quantiles
        shown = " ".join(f"{k} {v * scale:+.2f}" for k, v in q.items() if k in ("p01", "p25", "p50", "p75", "p99"))
        self.emit(Text(f"mean {distribution.mean * scale:+.2f}; {shown}; up {distribution.rows_up:,}, "
                       f"unchanged {distribution.rows_unchanged:,}, down {distribution.rows_down:,}", style="dim"))
        out.print()

    def migration(self, migration, rows: int) -> None:
        self.title("grade migration (% of each old grade's rows)")
        table = _table(("old \\ new", "left"), *[(g, "right") for g in migration.new_grades], ("rows", "right"))
        for i, (grade, counts) in enumerate(zip(migration.old_grades, migration.counts)):
            total = sum(counts)
            cells = [Text(f"{n / total:.1%}" if n else "·", style="bold" if n and i == j else "")
                     for j, n in enumerate(counts)]
            table.add_row(grade, *cells, f"{total:,}")
        self.emit(table)
        note = "" if migration.is_same_grades else " (grades differ: positions in each version's list compared)"
        self.emit(Text(f"up {migration.rows_up:,} ({_pct(migration.rows_up / rows)}), same "
                       f"{migration.rows_same:,} ({_pct(migration.rows_same / rows)}), down "
                       f"{migration.rows_down:,} ({_pct(migration.rows_down / rows)}){note}", style="dim"))
        out.print()

    def swap(self, swap, has_outcome: bool) -> None:
        cutoff = (f"{swap.cutoff_old:g}" if swap.cutoff_old == swap.cutoff_new
                  else f"{swap.cutoff_old:g} (old) / {swap.cutoff_new:g} (new)")
        self.title(f"swap set at cut-off {cutoff} (accept: score ≥ cut-off)")
        columns = [("cell", "left"), ("rows", "right"), ("share", "right")]
        if has_outcome:
            columns += [("with outcome", "right"), ("event rate", "right")]
        table = _table(*columns)
        for cell in swap.cells:
            row = [SWAP_WORDS[cell.name], f"{cell.rows:,}", _pct(cell.share)]
            if has_outcome:
                row += [f"{cell.rows_with_outcome:,}", _pct(cell.event_rate, 2)]
            table.add_row(*row)
        self.emit(table)
        out.print()
