"""The HTML report of a model fit (``scoremon fit … --html FILE``).

Built from the :class:`~scoremon.develop.records.FitReport` the fit computed — the binning
file's counts per bin, the λ path with its coefficients and cross-validated measure, and the
ROC points kept by the pass that measured Gini and KS. No query runs here. Sections: the fit
at a glance (data, settings, status and warnings in words); IV ranking; WoE and event rate
over each characteristic's bins; the λ path and the cross-validated choice of λ (or a plain
statement that the fit was not penalised); the development ROC curve and KS.
"""
from __future__ import annotations

import math
import textwrap

from ...develop.fitting import HIGH_IV
from ...develop.records import Characteristic, FitReport
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
    status_badge,
    table,
    tag,
)

COEFFICIENT_COLUMNS = 5  # characteristics per table of path coefficients
STATUS_WORDS = {"converged": "converged", "separation": "quasi-separation: coefficients run away",
                "no_convergence": "did not converge"}


def fit_html(report: FitReport, engine: str) -> str:
    """The self-contained HTML report of ``report``; ``engine`` is the dialect the fit ran on."""
    stamp = Stamp(
        title="Model fit report",
        model_name=report.model_name or report.table,
        versions=((report.model_version or DASH, report.spec_fingerprint or DASH),),
        engine=engine,
        population=f"table {report.table} (development rows)",
        rows=report.rows,
        run_at=report.run_at or DASH,
        extra=(("binning", f"{report.binning_file} (fingerprint {report.binning_fingerprint})" if report.binning_file
                else f"fingerprint {report.binning_fingerprint}, counted in the same run"),
               ("spec written", report.spec_file or DASH)),
    )
    sections = [_glance(report), _iv_ranking(report), _characteristics(report), _path(report), _roc(report)]
    return render_page(stamp, sections)


def _log10(value: float) -> float:
    return math.log10(value) if value > 0 else float("-inf")


# ---------------------------------------------------------------- 1 at a glance

def _glance(report: FitReport) -> Section:
    s = report.settings
    penalty = ("none: the maximum-likelihood fit" if s.penalty == "none"
               else f"{s.penalty} (α = {s.alpha:g}), λ chosen by {s.folds}-fold cross-validation on {s.cv_metric}"
               + (" with the one-standard-error rule" if s.one_se else ""))
    d = report.discrimination
    cv = ("" if d.cv_gini_mean is None else
          f"; held-out folds: Gini {number(d.cv_gini_mean)} ± {number(d.cv_gini_sd)}, "
          f"KS {number(d.cv_ks_mean)} ± {number(d.cv_ks_sd)}")
    status = "ok" if report.status == "converged" else "alert"
    pairs = [
        ("rows", f"{report.rows:,}, of which {report.events:,} events ({percent(report.events / report.rows, 2)})"
         if report.rows else "0"),
        ("penalty", penalty),
        ("selection", f"IV at least {s.min_iv:g}, WoE correlation at most {s.max_correlation:g} in size"),
        ("characteristics", f"{len(report.characteristics)} in the model, {len(report.left_out)} left out"),
        ("chosen fit", join([status_badge(status), " ", STATUS_WORDS.get(report.status, report.status)])),
        ("discrimination", f"development rows: Gini {number(d.gini)}, KS {number(d.ks)}{cv}"),
        ("scaling", f"{s.base_score:g} points at odds {s.base_odds:g} to 1, {s.pdo:g} points to double the odds"),
        ("passes over the rows", str(report.passes)),
    ]
    blocks = [facts(pairs)]
    if report.warnings:
        blocks.append(tag("h3", f"Warnings ({len(report.warnings)})"))
        blocks.append(tag("ul", join(tag("li", join([status_badge("watch"), " ", w])) for w in report.warnings),
                          class_="warnings"))
    else:
        blocks.append(paragraph(join([status_badge("ok"), " No warnings: no positive coefficient, no leakage-sized "
                                      "IV, no small bin, no separation, every fit converged."])))
    return Section("The fit at a glance", tuple(blocks), "What was fitted, how, and what to check before using it.",
                   "glance")


# ---------------------------------------------------------------- 2 IV ranking

def _iv_rows(report: FitReport) -> list[tuple[str, float | None, str, float | None]]:
    """(name, IV, in the model or why not, coefficient) for every characteristic of the binning file."""
    rows = [(c.name, c.iv, "in the model", c.coefficient) for c in report.characteristics if c.coefficient != 0.0]
    rows += [(left.name, left.iv, f"left out: {left.reason}", None) for left in report.left_out]
    return sorted(rows, key=lambda r: -(r[1] if r[1] is not None else -1.0))


def _iv_ranking(report: FitReport) -> Section:
    rows = _iv_rows(report)
    drawn = [r for r in rows if r[1] is not None]
    minimum = report.settings.min_iv

    def paint(fig, ax):
        ys = list(range(len(drawn)))[::-1]
        inside = [r[2] == "in the model" for r in drawn]
        bars = ax.barh(ys, [r[1] for r in drawn], height=0.62,
                       color=[palette.REFERENCE.colour if i else palette.COMPARED_BAND for i in inside],
                       edgecolor=[palette.REFERENCE.colour if i else palette.COMPARED.colour for i in inside],
                       hatch=[None if i else "///" for i in inside], linewidth=0.8)
        charts.label_bars(ax, bars, [f"{r[1]:.3f}" + ("" if i else "  left out") for r, i in zip(drawn, inside)])
        ax.set_yticks(ys, [r[0] for r in drawn])
        top = max([r[1] for r in drawn] + [minimum]) * 1.35
        ax.set_xlim(0, top)
        ax.axvline(minimum, color=palette.WATCH_LINE, linestyle="--", linewidth=1.0)
        ax.annotate(f"minimum IV {minimum:g}", xy=(minimum, 1.0), xycoords=("data", "axes fraction"), xytext=(3, 0),
                    textcoords="offset points", va="top", fontsize=charts.FONT_SIZE - 1, color=palette.WATCH_LINE)
        if top > HIGH_IV:
            ax.axvline(HIGH_IV, color=palette.ALERT_LINE, linestyle="-", linewidth=1.0)
            ax.annotate(f"{HIGH_IV:g}: check for leakage", xy=(HIGH_IV, 0.0), xycoords=("data", "axes fraction"),
                        xytext=(3, 2), textcoords="offset points", va="bottom", fontsize=charts.FONT_SIZE - 1,
                        color=palette.ALERT_LINE)
        ax.grid(axis="x")
        ax.grid(axis="y", visible=False)
        ax.set_xlabel("information value (IV) on the development rows")

    blocks = []
    if drawn:
        svg = charts.chart("iv", "Information value of every characteristic", 0.26 * len(drawn) + 0.9, paint)
        kept = sum(r[2] == "in the model" for r in rows)
        caption = (f"Look for strong characteristics left out and weak ones kept: {kept} of {len(rows)} are in the "
                   f"model (solid blue); hatched bars are left out, with the reason in the table.")
        numbers = table(["characteristic", "IV", "in the model?", "coefficient"],
                        [[name, number(iv, 4), why, number(coefficient, 4)] for name, iv, why, coefficient in rows],
                        [False, True, False, True])
        blocks.append(figure(svg, caption, numbers, open_numbers=True))
    missing = [r for r in rows if r[1] is None]
    if missing:
        blocks.append(paragraph("No IV recorded for: " + ", ".join(r[0] for r in missing) + ".", class_="note"))
    return Section("Information value ranking", tuple(blocks),
                   "IV of each characteristic over its bins, as the binning file counted it; the fit's selection "
                   "starts from this ranking.", "iv")


# ---------------------------------------------------------------- 3 WoE and event rate per characteristic

def _characteristics(report: FitReport) -> Section:
    blocks = []
    for index, c in enumerate(report.characteristics):
        if c.bins:
            blocks.append(_characteristic(index, c))
    if not blocks:
        blocks.append(paragraph("The fit record holds no bins to draw."))
    return Section("Characteristics over their bins", tuple(blocks),
                   "For each characteristic in the model: the weight of evidence (WoE) of each bin, its event rate, "
                   "and under each bin's name its share of the development rows. A bin with no rows is drawn empty.",
                   "characteristics")


def _characteristic(index: int, c: Characteristic) -> Markup:
    total = sum(b.rows for b in c.bins)
    shares = [b.rows / total if total else 0.0 for b in c.bins]
    # the panels share the full width, so a label gets about 1/len of 8 inches: wrap it to fit
    width = max(8, int(96 / max(1, len(c.bins))))
    labels = [textwrap.fill(b.label, width, break_long_words=True) + f"\n{percent(s)} of rows"
              for b, s in zip(c.bins, shares)]

    def paint(fig, axes):
        woe_ax, rate_ax = axes
        xs = list(range(len(c.bins)))
        woes = [b.woe if b.rows else 0.0 for b in c.bins]
        bars = woe_ax.bar(xs, woes, width=0.6, color=[palette.REFERENCE.colour if w >= 0 else palette.COMPARED.colour
                                                      for w in woes],
                          hatch=[None if w >= 0 else "///" for w in woes], edgecolor=palette.PAPER, linewidth=0)
        charts.label_bars(woe_ax, bars, [f"{b.woe:+.2f}" if b.rows else "no rows" for b in c.bins])
        woe_ax.axhline(0, color=palette.INK, linewidth=0.8)
        low, high = min(woes + [0.0]), max(woes + [0.0])
        pad = (high - low) * 0.22 or 0.1
        woe_ax.set_ylim(low - pad, high + pad)
        woe_ax.set_ylabel("WoE")
        woe_ax.set_title("weight of evidence (above 0: fewer events than overall; hatched: more)")
        rate_points = [(x, b.event_rate) for x, b in zip(xs, c.bins) if b.event_rate is not None and b.rows]
        rate_ax.plot([p[0] for p in rate_points], [p[1] for p in rate_points], color=palette.INK,
                     linestyle=palette.REFERENCE.line, marker="o", linewidth=1.2)
        for x, rate in rate_points:
            rate_ax.annotate(percent(rate), (x, rate), xytext=(7, 0), textcoords="offset points", ha="left",
                             va="center", fontsize=charts.FONT_SIZE - 1,
                             bbox={"boxstyle": "square,pad=0.1", "facecolor": palette.PAPER, "edgecolor": "none"})
        rate_ax.set_ylim(0, max([p[1] for p in rate_points] + [0.01]) * 1.2)
        charts.percent_axis(rate_ax, "y", 0)
        rate_ax.set_ylabel("event rate")
        rate_ax.set_title("event rate")
        rate_ax.set_xticks(xs, labels, fontsize=charts.FONT_SIZE - 1)
        rate_ax.set_xlim(-0.6, len(xs) - 0.4)
        woe_ax.tick_params(axis="x", labelbottom=False)

    lines = max(label.count("\n") for label in labels) + 1
    svg = charts.chart(f"bins-{index}", f"WoE and event rate over the bins of {c.name}", 3.3 + 0.13 * lines, paint,
                       rows=2, sharex=True)
    woes = [b.woe for b in c.bins if b.rows]
    caption = (f"{c.name}: look for WoE that moves steadily from bin to bin and no bin that is too small — "
               f"WoE from {min(woes):+.2f} to {max(woes):+.2f}, IV {c.iv:.3f}, coefficient {c.coefficient:+.4f}."
               if woes else f"{c.name}: no bin holds rows.")
    numbers = table(["bin", "rows", "share", "events", "event rate", "WoE"],
                    [[b.label, count(b.rows), percent(s, 2), count(b.events), percent(b.event_rate, 2),
                      number(b.woe, 4, signed=True)] for b, s in zip(c.bins, shares)])
    return join([tag("h3", c.name), figure(svg, caption, numbers)])


# ---------------------------------------------------------------- 4 λ path

def _path(report: FitReport) -> Section:
    s = report.settings
    if not report.path:
        text = ("Not penalised: this fit used no penalty (--penalty none), so there is no λ path and no "
                "cross-validated choice of λ to show; the coefficients are the maximum-likelihood ones.")
        return Section("λ path and cross-validation", (paragraph(text),), key="path")
    steps = list(report.path)
    names = [c.name for c in report.characteristics]
    logs = [_log10(step.lam) for step in steps]
    chosen, best = _log10(report.chosen_lambda), _log10(report.best_lambda)
    errors = [step.cv_sd / math.sqrt(s.folds) if math.isfinite(step.cv_sd) else 0.0 for step in steps]
    lower_better = s.cv_metric == "deviance"

    def mark(ax, words: bool):
        ax.axvline(chosen, color=palette.ALERT_LINE, linestyle="-", linewidth=1.1)
        if words:
            ax.annotate(f"chosen λ {report.chosen_lambda:.3g}", xy=(chosen, 1.0), xycoords=("data", "axes fraction"),
                        xytext=(3, -2), textcoords="offset points", va="top", fontsize=charts.FONT_SIZE - 1,
                        color=palette.ALERT_LINE)
        if best != chosen:
            ax.axvline(best, color=palette.WATCH_LINE, linestyle="--", linewidth=1.0)
            if words:
                ax.annotate(f"best mean λ {report.best_lambda:.3g}", xy=(best, 0.0), xycoords=("data", "axes fraction"),
                            xytext=(3, 2), textcoords="offset points", va="bottom", fontsize=charts.FONT_SIZE - 1,
                            color=palette.WATCH_LINE)

    def paint(fig, axes):
        coefficient_ax, cv_ax = axes
        for j, name in enumerate(names):
            look = palette.series(j)
            values = [step.coefficients[j] if j < len(step.coefficients) else float("nan") for step in steps]
            coefficient_ax.plot(logs, values, color=look.colour, linestyle=look.line, marker=look.marker,
                                markersize=3, linewidth=1.2, label=name)
        coefficient_ax.axhline(0, color=palette.MUTED, linewidth=0.8)
        coefficient_ax.set_ylabel("coefficient (times WoE)")
        coefficient_ax.set_title("coefficients along the path")
        coefficient_ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=charts.FONT_SIZE - 1)
        mark(coefficient_ax, False)
        cv_ax.errorbar(logs, [step.cv_mean for step in steps], yerr=errors, color=palette.INK, ecolor=palette.MUTED,
                       marker="o", markersize=3, linewidth=1.2, capsize=2)
        cv_ax.set_ylabel(f"{s.cv_metric}, held-out folds")
        cv_ax.set_title(f"cross-validated {s.cv_metric} ({'lower' if lower_better else 'higher'} is better), "
                        "± one standard error")
        cv_ax.set_xlabel("log10 λ (the penalty strengthens to the right)")
        mark(cv_ax, True)

    svg = charts.chart("path", "Coefficients and cross-validated measure along the λ path", 4.6, paint, rows=2,
                       sharex=True)
    at = next(step for step in steps if step.lam == report.chosen_lambda) if any(
        step.lam == report.chosen_lambda for step in steps) else None
    caption = (f"Look at where the cross-validated {s.cv_metric} levels off and which coefficients are still 0 "
               f"there: λ {report.chosen_lambda:.3g} was chosen"
               + (f", with {at.nonzero} of {len(names)} characteristics, {s.cv_metric} "
                  f"{at.cv_mean:.4f} ± {at.cv_sd / math.sqrt(s.folds):.4f}." if at else "."))
    rows = []
    for step, error in zip(steps, errors):
        mark_words = "chosen" if step.lam == report.chosen_lambda else "best mean" if step.lam == report.best_lambda \
            else ""
        rows.append([f"{step.lam:.4g}", number(_log10(step.lam), 2), str(step.nonzero), number(step.cv_mean, 4),
                     number(error, 4), STATUS_WORDS.get(step.status, step.status), mark_words])
    tables = [table(["λ", "log10 λ", "non-zero", f"CV {s.cv_metric}", "± standard error", "fit", "mark"], rows,
                    [True, True, True, True, True, False, False])]
    # the coefficients in tables of a few characteristics each, so that a printed page holds them
    for first in range(0, len(names), COEFFICIENT_COLUMNS):
        part = names[first:first + COEFFICIENT_COLUMNS]
        tables.append(table(["λ"] + part, [[f"{step.lam:.4g}"] + [number(v, 4) for v in
                                                                 step.coefficients[first:first + len(part)]]
                                          for step in steps], [True] * (len(part) + 1)))
    numbers = join(tables)
    intro = (f"{s.penalty} penalty (α = {s.alpha:g}) over {len(steps)} values of λ from λ_max "
             f"{report.lambda_max:.4g} down to {steps[-1].lam:.4g}; error bars are one standard error of the mean "
             f"over the {s.folds} folds (their standard deviation / √{s.folds})"
             + ("; the chosen λ is the largest within one standard error of the best mean." if s.one_se else "."))
    return Section("λ path and cross-validation", (figure(svg, caption, numbers),), intro, "path")


# ---------------------------------------------------------------- 5 ROC and KS

def _roc(report: FitReport) -> Section:
    d = report.discrimination
    if not d.roc:
        return Section("ROC curve and KS", (paragraph(
            f"Gini {number(d.gini)}, KS {number(d.ks)} on the development rows; this fit record keeps no ROC points "
            "to draw."),), key="roc")

    def paint(fig, ax):
        xs, ys = [p[0] for p in d.roc], [p[1] for p in d.roc]
        ax.plot([0, 1], [0, 1], color=palette.MUTED, linestyle=":", linewidth=1.0)
        ax.annotate("no discrimination", xy=(0.62, 0.58), rotation=45, rotation_mode="anchor", ha="center",
                    fontsize=charts.FONT_SIZE - 1, color=palette.MUTED, transform_rotates_text=True)
        ax.fill_between(xs, xs, ys, color=palette.BAND, linewidth=0)
        ax.plot(xs, ys, color=palette.REFERENCE.colour, linewidth=1.8, label="development rows")
        if d.ks_point is not None:
            x, y = d.ks_point
            ax.plot([x, x], [x, y], color=palette.ALERT_LINE, linewidth=1.4)
            ax.plot([x], [y], marker="o", color=palette.ALERT_LINE, markersize=4)
            ax.annotate(f"KS {d.ks:.3f}", xy=(x, (x + y) / 2), xytext=(5, 0), textcoords="offset points",
                        va="center", fontsize=charts.FONT_SIZE, color=palette.ALERT_LINE)
        ax.set_xlim(0, 1)
        ax.set_ylim(0, 1)
        ax.set_aspect("equal")
        charts.percent_axis(ax, "x")
        charts.percent_axis(ax, "y")
        ax.grid(axis="x")
        ax.set_xlabel("share of non-events at or below the score")
        ax.set_ylabel("share of events at or below the score")
        ax.text(0.97, 0.05, f"Gini {d.gini:.3f}\nAUC {(1 + d.gini) / 2:.3f}", transform=ax.transAxes, ha="right",
                va="bottom", fontsize=charts.FONT_SIZE, bbox={"boxstyle": "round,pad=0.3", "facecolor": palette.PAPER,
                                                               "edgecolor": palette.RULE})

    svg = charts.chart("roc", "ROC curve of the development rows, with the KS marked", 4.2, paint, width=4.6)
    where = ("" if d.ks_point is None else
             f", where {percent(d.ks_point[1])} of events and {percent(d.ks_point[0])} of non-events score at or "
             "below the same value")
    caption = (f"Look at how far the curve bows above the diagonal: Gini {d.gini:.3f}; KS {d.ks:.3f} is the "
               f"largest vertical gap{where}.")
    cv = [["development rows", number(d.gini), number((1 + d.gini) / 2), number(d.ks)]]
    if d.cv_gini_mean is not None:
        cv.append(["held-out folds (mean ± sd)", f"{number(d.cv_gini_mean)} ± {number(d.cv_gini_sd)}",
                   number((1 + d.cv_gini_mean) / 2), f"{number(d.cv_ks_mean)} ± {number(d.cv_ks_sd)}"])
    numbers = join([
        table(["rows", "Gini", "AUC", "KS"], cv),
        table(["share of non-events", "share of events", "gap"],
              [[percent(x, 1), percent(y, 1), percent(y - x, 1)] for x, y in d.roc], [True, True, True]),
    ])
    intro = ("Rows sorted by score, riskiest first: the curve gives, at each score, the share of events (y) and of "
             "non-events (x) at or below it — those a cut-off there would decline. The points are the score values "
             "closest below each 2 % of the rows, from the same pass that measured Gini and KS.")
    return Section("ROC curve and KS", (figure(svg, caption, numbers),), intro, "roc")
