"""Markdown renderings of result records, for the audit file.

:func:`diff_markdown` writes a :class:`~scoremon.diff.records.DiffReport` as one document
stamped with both fingerprints, the population used and its row count, scoremon's version and
the time of the run, so that it can
be filed as it is. Nothing here computes; shares and rates come from the records.
"""
from __future__ import annotations

from .cautions import CAUTIONS

SWAP_WORDS = {"accepted_by_both": "accepted by both", "swap_in": "swap-in (declined → accepted)",
              "swap_out": "swap-out (accepted → declined)", "declined_by_both": "declined by both"}


def _cell(value) -> str:
    """Table cell text: pipes and line breaks would break a Markdown table row."""
    return str(value).replace("|", "\\|").replace("\n", " ")


def _table(header: list[str], rows: list[list], align: list[str] | None = None) -> list[str]:
    align = align or ["l"] * len(header)
    marks = {"l": "---", "r": "---:"}
    lines = ["| " + " | ".join(_cell(h) for h in header) + " |",
             "| " + " | ".join(marks[a] for a in align) + " |"]
    lines += ["| " + " | ".join(_cell(v) for v in row) + " |" for row in rows]
    return lines + [""]


def _pct(share: float | None, digits: int = 1) -> str:
    return "–" if share is None else f"{share:.{digits}%}"


def diff_markdown(report) -> str:
    """The audit document for a diff (and its impact, when a population was given)."""
    diff, impact = report.diff, report.impact
    lines = [f"# Model change: {diff.old.name} {diff.old.version} → {diff.new.name} {diff.new.version}", ""]
    lines += _table(["", "version", "fingerprint", "spec"], [
        ["old", diff.old.version, f"`{diff.old.fingerprint}`", diff.old.source],
        ["new", diff.new.version, f"`{diff.new.fingerprint}`", diff.new.source],
    ])
    population = f"{impact.population} ({impact.rows:,} rows)" if impact else "none given (structural comparison only)"
    lines += [f"- Run at: {report.run_at}", f"- scoremon version: {report.scoremon_version}",
              f"- Population: {population}"]
    if diff.is_equivalent:
        lines += ["- Result: **no change** — the two specs are the same model (equal fingerprints).", ""]
    else:
        lines += [f"- Result: **{len(diff.changes)} changes**; overall class **{diff.effect.words}**.", ""]
        lines += ["Classes, by how a change can affect a score: *none* (no score or PD can move), *scaling only* "
                  "(only the intercept or scaling changed; the order of rows by score is kept, rounding aside), *one feature* (one feature's contribution "
                  "changed), *structure* (features added or removed, several features changed, or a new PDO that "
                  "stretches features given in points against the others).", ""]
        lines += ["## Changes", ""]
        lines += _table(["#", "class", "what changed", "outputs it can alter"],
                        [[i, c.effect.words, c.summary, ", ".join(c.outputs) or "–"]
                         for i, c in enumerate(diff.changes, start=1)], ["r", "l", "l", "l"])
        if diff.score_map is not None:
            lines += [f"**Every score:** {diff.score_map.summary}.", ""]
    for note in diff.notes:
        lines += [f"Note: {note}.", ""]
    if impact is not None:
        lines += _impact(impact)
    lines += ["## Cautions", "", CAUTIONS, ""]
    return "\n".join(lines)


def _impact(impact) -> list[str]:
    lines = ["## Impact on the population", ""]
    facts = [f"- Population: {impact.population}, {impact.rows:,} rows"]
    if impact.outcome:
        facts.append(f"- Outcome column `{impact.outcome}`: known for {impact.rows_with_outcome:,} rows, "
                     f"{impact.events:,} events (rate {_pct(impact.event_rate, 2)})")
    facts += [f"- Mean score {impact.mean_score_old:.2f} → {impact.mean_score_new:.2f}; mean PD "
              f"{impact.mean_pd_old:.3%} → {impact.mean_pd_new:.3%}",
              "- Spearman rank correlation of old and new scores: "
              + ("undefined (a version gives every row the same score)" if impact.spearman is None
                 else f"{impact.spearman:.6f}"), ""]
    lines += facts
    for title, dist, scale, unit in (("Score change (new − old)", impact.score_change, 1.0, "points"),
                                     ("PD change (new − old)", impact.pd_change, 100.0, "percentage points")):
        lines += [f"### {title}", ""]
        lines += [f"Mean {dist.mean * scale:+.4f} {unit}; minimum {dist.minimum * scale:+.4f}, maximum "
                  f"{dist.maximum * scale:+.4f}. Up {dist.rows_up:,}, unchanged {dist.rows_unchanged:,}, "
                  f"down {dist.rows_down:,}.", ""]
        lines += _table(list(dist.quantiles), [[f"{v * scale:+.4f}" for v in dist.quantiles.values()]],
                        ["r"] * len(dist.quantiles))
        lines += _table(["band", "rows", "share"], [[b.label, f"{b.rows:,}", _pct(b.share, 2)] for b in dist.bands],
                        ["l", "r", "r"])
    m = impact.migration
    lines += ["### Grade migration", "", "Rows by old grade (rows) and new grade (columns), best grade first; "
              "in brackets the share of the old grade's rows.", ""]
    rows = []
    for grade, counts in zip(m.old_grades, m.counts):
        total = sum(counts)
        rows.append([f"**{grade}**"] + [f"{n:,} ({_pct(n / total if total else None)})" for n in counts]
                    + [f"{total:,}"])
    lines += _table(["old \\ new"] + list(m.new_grades) + ["total"], rows, ["l"] + ["r"] * (len(m.new_grades) + 1))
    n = impact.rows
    lines += [f"Moved to a better grade: {m.rows_up:,} ({_pct(m.rows_up / n)}); same grade: {m.rows_same:,} "
              f"({_pct(m.rows_same / n)}); worse grade: {m.rows_down:,} ({_pct(m.rows_down / n)})."
              + ("" if m.is_same_grades else " The versions name different grades: positions in each version's "
                                             "list are compared."), ""]
    if impact.swap_set is not None:
        s = impact.swap_set
        cutoff = (f"{s.cutoff_old:g}" if s.cutoff_old == s.cutoff_new
                  else f"{s.cutoff_old:g} (old version) and {s.cutoff_new:g} (new version)")
        lines += ["### Swap set", "", f"Cut-off {cutoff}; a row is accepted when its score is at or above the "
                  "cut-off.", ""]
        header = ["cell", "rows", "share"] + (["rows with outcome", "events", "event rate"] if impact.outcome else [])
        body = []
        for c in s.cells:
            row = [SWAP_WORDS[c.name], f"{c.rows:,}", _pct(c.share, 2)]
            if impact.outcome:
                row += [f"{c.rows_with_outcome:,}", f"{c.events:,}", _pct(c.event_rate, 2)]
            body.append(row)
        lines += _table(header, body, ["l"] + ["r"] * (len(header) - 1))
    r = impact.first_reason
    lines += ["### Reasons", "", f"The first reason changes for {r.rows_changed:,} rows ({_pct(r.share_changed, 2)}).",
              ""]
    if r.top_moves:
        lines += _table(["old first reason", "new first reason", "rows"],
                        [[a or "(none)", b or "(none)", f"{k:,}"] for a, b, k in r.top_moves], ["l", "l", "r"])
    return lines
