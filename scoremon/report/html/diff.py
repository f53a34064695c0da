"""The HTML report of a diff between two model versions (``scoremon diff … --html FILE``).

Built from the :class:`~scoremon.diff.records.DiffReport` the diff computed, and for the
points over each changed characteristic's bins from the diff's own per-feature comparison
(:func:`scoremon.diff.features.compare_feature`: both versions evaluated on every piece of
the common refinement of their bins). No query runs here. Sections: the change list; with a
population, the grade migration, the distribution of score change, the swap set at the
cut-off and the first-reason changes; then old and new points per changed characteristic.
"""
from __future__ import annotations

from ...diff.features import compare_feature
from ...diff.impact import Impact
from ...diff.records import DiffReport
from ...diff.wording import number as plain_number
from ...monitor.statistics import jeffreys_interval
from ...spec.model import Spec
from ...spec.terms import feature_terms
from . import charts, palette
from .page import (
    DASH,
    Markup,
    Section,
    Stamp,
    count,
    facts,
    figure,
    join,
    number,
    paragraph,
    percent,
    render_page,
    table,
)

SWAP_WORDS = {"accepted_by_both": "accepted by both", "swap_in": "swap-in: declined → accepted",
              "swap_out": "swap-out: accepted → declined", "declined_by_both": "declined by both"}
SPECIAL_PROBES = ("NaN", "+inf", "-inf")


def diff_html(report: DiffReport, old: Spec, new: Spec, engine: str | None) -> str:
    """The self-contained HTML report of ``report``, the diff of ``old`` against ``new``.

    ``engine`` is the dialect the population was scored on (None without a population).
    """
    diff, impact = report.diff, report.impact
    name = diff.new.name if diff.old.name == diff.new.name else f"{diff.old.name} → {diff.new.name}"
    stamp = Stamp(
        title="Model change report",
        model_name=name,
        versions=((diff.old.version, diff.old.fingerprint), (diff.new.version, diff.new.fingerprint)),
        engine=engine or "no engine",
        population=impact.population if impact else "none given (structural comparison only)",
        rows=impact.rows if impact else None,
        run_at=report.run_at,
        extra=(("old spec", diff.old.source or DASH), ("new spec", diff.new.source or DASH)),
    )
    sections = [_changes(report)]
    if impact is not None:
        sections += [_migration(impact), _score_change(impact)]
        if impact.swap_set is not None:
            sections.append(_swap_set(impact))
        sections.append(_reasons(impact))
    features = _feature_section(report, old, new)
    if features is not None:
        sections.append(features)
    return render_page(stamp, sections)


# ---------------------------------------------------------------- 1 change list

def _changes(report: DiffReport) -> Section:
    diff = report.diff
    if diff.is_equivalent:
        return Section("Changes", (paragraph("No change: the two specs are the same model (equal fingerprints)."),),
                       key="changes")
    summary = [("changes", f"{len(diff.changes)}"), ("overall class", diff.effect.words)]
    if diff.score_map is not None:
        summary.append(("every score", diff.score_map.summary))
    blocks = [facts(summary),
              paragraph("Class, by how a change can affect a score: none (no score or PD can move); scaling only "
                        "(only the intercept or the scaling; the order of rows by score is kept, rounding aside); "
                        "one feature; structure (features added or removed, several features changed, or a new PDO "
                        "that stretches features given in points against the others).", class_="note"),
              table(["#", "class", "what changed", "outputs it can alter"],
                    [[str(i), c.effect.words.replace(" ", "\u00a0"), c.summary, ", ".join(c.outputs) or DASH]
                     for i, c in enumerate(diff.changes, start=1)], [True, False, False, False])]
    blocks += [paragraph(f"Note: {note}.", class_="note") for note in diff.notes]
    return Section("Changes", tuple(blocks), "Every semantic difference, found by comparing the validated models, "
                   "never their text.", "changes")


# ---------------------------------------------------------------- 2 grade migration

def shade_map():
    """The white-to-deep-blue map of shaded cells (see :mod:`palette`)."""
    from matplotlib.colors import LinearSegmentedColormap

    return LinearSegmentedColormap.from_list("scoremon_shades", list(palette.SHADES))


def _migration(impact: Impact) -> Section:
    m = impact.migration
    totals = [sum(row) for row in m.counts]
    shares = [[n / total if total else 0.0 for n in row] for row, total in zip(m.counts, totals)]

    def paint(fig, ax):
        import numpy as np

        cmap = shade_map()
        # cells as vector shapes (imshow would embed a raster image)
        ax.pcolormesh(np.arange(len(m.new_grades) + 1) - 0.5, np.arange(len(m.old_grades) + 1) - 0.5,
                      np.array(shares), cmap=cmap, vmin=0.0, vmax=1.0)
        ax.invert_yaxis()
        for i, row in enumerate(m.counts):
            for j, n in enumerate(row):
                if n == 0:
                    continue
                fill = "#{:02x}{:02x}{:02x}".format(*(int(c * 255) for c in cmap(shares[i][j])[:3]))
                ax.text(j, i, f"{n:,}\n{percent(shares[i][j])}", ha="center", va="center",
                        fontsize=charts.FONT_SIZE - 1, color=palette.text_on(fill), linespacing=1.1)
        ax.set_xticks(range(len(m.new_grades)), m.new_grades)
        ax.set_yticks(range(len(m.old_grades)), m.old_grades)
        ax.xaxis.set_ticks_position("top")
        ax.xaxis.set_label_position("top")
        ax.set_xlabel("grade under the new version")
        ax.set_ylabel("grade under the old version")
        ax.grid(False)
        for spine in ax.spines.values():
            spine.set_visible(False)
        ax.set_xticks([x - 0.5 for x in range(1, len(m.new_grades))], minor=True)
        ax.set_yticks([y - 0.5 for y in range(1, len(m.old_grades))], minor=True)
        ax.grid(which="minor", color=palette.PAPER, linewidth=1.5)
        ax.tick_params(which="minor", length=0)

    size = 0.42 * max(len(m.old_grades), len(m.new_grades)) + 1.1
    svg = charts.chart("migration", "Grade migration from the old version to the new", size, paint,
                       width=min(charts.WIDTH, size * 1.35))
    n = impact.rows
    caption = (f"Look off the diagonal: {percent(m.rows_up / n)} of rows move to a better grade, "
               f"{percent(m.rows_down / n)} to a worse one, {percent(m.rows_same / n)} stay."
               if m.is_same_grades else
               "The versions name different grades; positions in each version's list are compared.")
    numbers = table(["old \\ new"] + list(m.new_grades) + ["total"],
                    [[grade] + [count(v) for v in row] + [count(total)]
                     for grade, row, total in zip(m.old_grades, m.counts, totals)], head_rows=1)
    return Section("Grade migration", (figure(svg, caption, numbers),),
                   "Rows by old grade (rows of the grid) and new grade (columns), best grade first; each cell "
                   "gives its rows and their share of the old grade's rows, and is shaded by that share.",
                   "migration")


# ---------------------------------------------------------------- 3 score change

def _score_change(impact: Impact) -> Section:
    dist = impact.score_change
    bands = list(dist.bands)
    while len(bands) > 1 and bands[0].rows == 0 and bands[0].index != 0:
        bands.pop(0)
    while len(bands) > 1 and bands[-1].rows == 0 and bands[-1].index != 0:
        bands.pop()

    def paint(fig, ax):
        ys = list(range(len(bands)))
        colours = [palette.COMPARED.colour if b.index < 0 else palette.MUTED if b.index == 0
                   else palette.REFERENCE.colour for b in bands]
        bars = ax.barh(ys, [b.share for b in bands], color=colours, height=0.65,
                       hatch=["///" if b.index < 0 else None for b in bands], edgecolor=palette.PAPER, linewidth=0)
        charts.label_bars(ax, bars, [f"{percent(b.share)}  ({b.rows:,})" for b in bands])
        ax.set_yticks(ys, [b.label for b in bands])
        ax.set_xlim(0, max([b.share for b in bands] + [0.01]) * 1.3)
        charts.percent_axis(ax, "x")
        ax.grid(axis="x")
        ax.grid(axis="y", visible=False)
        ax.set_xlabel("share of rows")
        ax.set_ylabel("new score − old score")

    svg = charts.chart("score-change", "Distribution of the score change", 0.32 * len(bands) + 0.9, paint)
    caption = (f"Look at the balance of falls (ochre, hatched) and rises (blue): {dist.rows_down:,} rows fall, "
               f"{dist.rows_up:,} rise, {dist.rows_unchanged:,} keep their score; the mean change is "
               f"{dist.mean:+.2f} points.")
    numbers = join([
        table(["band", "rows", "share"], [[b.label, count(b.rows), percent(b.share, 2)] for b in dist.bands]),
        table(["minimum"] + list(dist.quantiles) + ["maximum", "mean"],
              [[plain_number(dist.minimum)] + [plain_number(v) for v in dist.quantiles.values()]
               + [plain_number(dist.maximum), number(dist.mean, 3, signed=True)]], [True] * (len(dist.quantiles) + 3)),
    ])
    intro = (f"Both versions scored the same {impact.rows:,} rows in one query. Mean score "
             f"{impact.mean_score_old:.2f} → {impact.mean_score_new:.2f}; mean PD {impact.mean_pd_old:.3%} → "
             f"{impact.mean_pd_new:.3%}; Spearman rank correlation "
             + ("undefined" if impact.spearman is None else f"{impact.spearman:.4f}") + ".")
    return Section("Score change", (figure(svg, caption, numbers),), intro, "score-change")


# ---------------------------------------------------------------- 4 swap set

def _swap_set(impact: Impact) -> Section:
    s = impact.swap_set
    cells = list(s.cells)
    with_outcome = impact.outcome is not None
    intervals = [jeffreys_interval(c.rows_with_outcome, c.events) if with_outcome else None for c in cells]

    def paint(fig, axes):
        first, second = (axes if with_outcome else (axes, None))
        ys = list(range(len(cells)))[::-1]
        colours = [palette.MUTED, palette.REFERENCE.colour, palette.COMPARED.colour, palette.RULE]
        bars = first.barh(ys, [c.rows for c in cells], color=colours, height=0.6,
                          hatch=[None, None, "///", None], edgecolor=palette.PAPER, linewidth=0)
        charts.label_bars(first, bars, [f"{c.rows:,} ({percent(c.share)})" for c in cells])
        first.set_yticks(ys, [SWAP_WORDS.get(c.name, c.name) for c in cells])
        first.set_xlim(0, max(c.rows for c in cells) * 1.45 or 1)
        first.set_xlabel("rows")
        first.grid(axis="x")
        first.grid(axis="y", visible=False)
        first.set_title("rows in each cell")
        first.xaxis.set_major_formatter(_thousands())
        first.xaxis.set_major_locator(_few_ticks())
        if second is not None:
            for y, c, interval in zip(ys, cells, intervals):
                if interval is None or c.event_rate is None:
                    second.text(0, y, " no outcome known", va="center", fontsize=charts.FONT_SIZE - 1)
                    continue
                second.hlines(y, interval[0], interval[1], color=palette.INK, linewidth=1.4)
                second.plot([c.event_rate], [y], marker="o", color=palette.INK, markersize=5)
                second.annotate(f"{percent(c.event_rate, 2)}", (interval[1], y), xytext=(4, 0),
                                textcoords="offset points", va="center", fontsize=charts.FONT_SIZE - 1)
            second.set_yticks(ys, [""] * len(ys))
            second.set_xlim(0, max((i[1] for i in intervals if i), default=0.1) * 1.3)
            charts.percent_axis(second, "x", 0)
            second.set_xlabel("event rate, with 95 % Jeffreys interval")
            second.grid(axis="x")
            second.grid(axis="y", visible=False)
            second.set_title("event rate, outcome known")

    cutoff = (f"{s.cutoff_old:g}" if s.cutoff_old == s.cutoff_new
              else f"{s.cutoff_old:g} (old version) and {s.cutoff_new:g} (new version)")
    svg = charts.chart("swap", "Swap set at the cut-off", 2.2, paint, columns=2 if with_outcome else 1,
                       **({"width_ratios": [3, 2]} if with_outcome else {}))
    by_name = {c.name: c for c in cells}
    swap_in, swap_out = by_name.get("swap_in"), by_name.get("swap_out")
    caption = (f"Look at the two swap cells: {swap_in.rows:,} rows would now be accepted and {swap_out.rows:,} "
               "declined" + (f"; their event rates are {percent(swap_in.event_rate, 2)} and "
                             f"{percent(swap_out.event_rate, 2)}." if with_outcome else ".")
               if swap_in and swap_out else "Look at the two swap cells.")
    header = ["cell", "rows", "share"] + (["rows with outcome", "events", "event rate", "interval low",
                                            "interval high"] if with_outcome else [])
    rows = []
    for c, interval in zip(cells, intervals):
        row = [SWAP_WORDS.get(c.name, c.name), count(c.rows), percent(c.share, 2)]
        if with_outcome:
            row += [count(c.rows_with_outcome), count(c.events), percent(c.event_rate, 2),
                    percent(interval[0] if interval else None, 2), percent(interval[1] if interval else None, 2)]
        rows.append(row)
    return Section("Swap set", (figure(svg, caption, table(header, rows), open_numbers=True),),
                   f"Cut-off {cutoff}: a row is accepted when its score is at or above the cut-off.", "swap")


def _thousands():
    from matplotlib.ticker import FuncFormatter

    return FuncFormatter(lambda v, _: f"{v:,.0f}")


def _few_ticks():
    from matplotlib.ticker import MaxNLocator

    return MaxNLocator(4)


# ---------------------------------------------------------------- 5 reasons

def _reasons(impact: Impact) -> Section:
    r = impact.first_reason
    blocks = [paragraph(f"The first reason given changes for {r.rows_changed:,} rows ({percent(r.share_changed, 2)}).")]
    if r.top_moves:
        blocks.append(table(["old first reason", "new first reason", "rows"],
                            [[a or "(none)", b or "(none)", count(k)] for a, b, k in r.top_moves]))
    return Section("First reasons", tuple(blocks), key="reasons")


# ---------------------------------------------------------------- 6 points per changed characteristic

def _feature_section(report: DiffReport, old: Spec, new: Spec) -> Section | None:
    names = report.diff.changed_features
    if not names:
        return None
    by_old = {f.name: f for f in old.features}
    by_new = {f.name: f for f in new.features}
    blocks = []
    for index, name in enumerate(names):
        rows = _feature_rows(old, new, by_old.get(name), by_new.get(name))
        if rows:
            blocks.append(_feature_chart(index, name, rows, by_old.get(name), by_new.get(name)))
    return Section("Points per changed characteristic", tuple(blocks),
                   "Old and new points of each changed characteristic over the pieces both versions' bins cut "
                   "its values into (NaN and ±infinity only where their route changed).", "features")


def _feature_rows(old: Spec, new: Spec, was, now) -> list[tuple[str, float | None, float | None]]:
    """(values, old points, new points) for each piece of the characteristic's values.

    The diff evaluates both versions on every piece of the common refinement of their bins:
    the open intervals between edges and each edge on its own. Runs of pieces that fall in the
    same old bin and the same new bin are joined into one interval here (``= 1600`` and
    ``in (1600, 1700)`` become ``[1600, 1700)``). NaN and ±infinity are left out: where their
    route changed, the change list says so.
    """
    if was is not None and now is not None and was.type == now.type:
        rows: list[tuple[str, float | None, float | None]] = []
        joined: list[tuple[str, str, object]] = []  # (first text, last text, probe) of the current run
        for probe in compare_feature(old, new, was, now).probes:
            if probe.where in SPECIAL_PROBES:
                continue
            run = joined[-1] if joined else None
            if (run is not None and _is_interval(probe.where) and _is_interval(run[1])
                    and (run[2].old.label, run[2].new.label) == (probe.old.label, probe.new.label)):
                joined[-1] = (run[0], probe.where, run[2])
            else:
                joined.append((probe.where, probe.where, probe))
        for first, last, probe in joined:
            where = _span(first, last) if _is_interval(first) else first
            rows.append((where, probe.old.points, probe.new.points))
        return rows
    rows = []
    if was is not None:
        rows += [(f"old: {b.label}", b.points, None) for b in feature_terms(old, was).bins]
    if now is not None:
        rows += [(f"new: {b.label}", None, b.points) for b in feature_terms(new, now).bins]
    return rows


def _is_interval(where: str) -> bool:
    return where.startswith("in (") or where.startswith("in [") or where.startswith("= ")


def _span(first: str, last: str) -> str:
    """The interval from the start of piece ``first`` to the end of piece ``last``."""
    left = "[" + first[2:] if first.startswith("= ") else first[3:].split(",")[0]
    right = last[2:] + "]" if last.startswith("= ") else last.rsplit(",", 1)[1].strip()
    return left if first == last and first.startswith("= ") else f"{left}, {right}"


def _feature_chart(index: int, name: str, rows, was, now) -> Markup:
    both = was is not None and now is not None
    moved = [r[1] is not None and r[2] is not None and abs(r[2] - r[1]) > 1e-9 for r in rows]

    def paint(fig, ax):
        ys = list(range(len(rows)))[::-1]
        height = 0.38
        old_bars = ax.barh([y + height / 2 for y in ys], [r[1] or 0.0 for r in rows], height,
                           color=palette.REFERENCE.colour, label="old version")
        new_bars = ax.barh([y - height / 2 for y in ys], [r[2] or 0.0 for r in rows], height,
                           color=palette.COMPARED.colour, hatch="///", edgecolor=palette.PAPER, linewidth=0,
                           label="new version")
        charts.label_bars(ax, old_bars, ["" if r[1] is None else plain_number(r[1]) for r in rows])
        charts.label_bars(ax, new_bars, ["" if r[2] is None else plain_number(r[2]) for r in rows])
        ax.set_yticks(ys, [f"{r[0]}{'  ◆' if m else ''}" for r, m in zip(rows, moved)])
        ax.axvline(0, color=palette.INK, linewidth=0.8)
        values = [v for r in rows for v in (r[1], r[2]) if v is not None] + [0.0]
        span = (max(values) - min(values)) or 1.0
        ax.set_xlim(min(values) - span * 0.12, max(values) + span * 0.15)
        ax.grid(axis="x")
        ax.grid(axis="y", visible=False)
        ax.set_xlabel("points")
        handles = [h for h, keep in ((old_bars, was is not None), (new_bars, now is not None)) if keep]
        fig.legend(handles=handles, loc="outside upper center", ncols=2)

    state = ("added in the new version" if was is None else "removed in the new version" if now is None
             else "changed")
    svg = charts.chart(f"feature-{index}", f"Points of {name}, old and new version", 0.3 * len(rows) + 1.0, paint)
    caption = (f"{name} ({state}): look for the values marked ◆, where the points differ — {sum(moved)} of "
               f"{len(rows)}." if both else f"{name} ({state}): its points over its bins.")
    numbers = table(["values", "old points", "new points", "change"],
                    [[r[0], DASH if r[1] is None else plain_number(r[1]), DASH if r[2] is None else plain_number(r[2]),
                      DASH if r[1] is None or r[2] is None else plain_number(r[2] - r[1])] for r in rows])
    return figure(svg, caption, numbers)
