"""The page every HTML report shares: the stamp at the top, sections, figures with their
captions and numbers, tables, status cells, and the cautions at the foot.

A page is one self-contained HTML file: the style sheet is inline, charts are inline SVG, and
nothing is fetched from anywhere — no font, script, style sheet or image — so the file reads
the same offline, in an archive, or attached to an e-mail. No JavaScript is used. Printing
(A4) starts each section on a new page, never splits a chart and keeps its caption with it;
the numbers beneath a chart may run on to the next page.

Every text that comes from a spec, a table or a run is escaped here, once: callers hand in
plain text, or :class:`Markup` for HTML they built with these functions.
"""
from __future__ import annotations

import html
from dataclasses import dataclass, field
from importlib import metadata
from typing import Iterable, Sequence

from ..cautions import CAUTIONS
from . import palette


class Markup(str):
    """HTML that is already safe (built by this module); plain ``str`` is escaped."""


def escape(value) -> Markup:
    """``value`` as HTML text: :class:`Markup` as it is, anything else escaped."""
    if isinstance(value, Markup):
        return value
    return Markup(html.escape("" if value is None else str(value), quote=True))


def join(parts: Iterable) -> Markup:
    return Markup("".join(escape(p) for p in parts))


def tag(name: str, content="", **attributes) -> Markup:
    """``<name attributes>content</name>``; attribute names drop a trailing ``_`` (``class_``)."""
    attrs = "".join(f' {k.rstrip("_").replace("_", "-")}="{escape(v)}"' for k, v in attributes.items() if v is not None)
    return Markup(f"<{name}{attrs}>{escape(content) if not isinstance(content, Markup) else content}</{name}>")


def scoremon_version() -> str:
    """The installed scoremon's version, for the stamp."""
    try:
        return metadata.version("scoremon")
    except metadata.PackageNotFoundError:  # run from a source tree that was never installed
        return "not installed"


@dataclass(frozen=True)
class Stamp:
    """What a report is about, printed at its top.

    ``versions`` holds (version, fingerprint) pairs: one for a monitoring run, old and new for
    a diff, every version met in a history pack. ``engine`` is the engine's dialect name,
    ``population`` what was read (``table applications``), ``rows`` how many rows.
    """

    title: str
    model_name: str
    versions: tuple[tuple[str, str], ...]
    engine: str
    population: str
    rows: int | None
    run_at: str
    as_of: str | None = None
    extra: tuple[tuple[str, str], ...] = ()
    tool_version: str = field(default_factory=scoremon_version)


@dataclass(frozen=True)
class Section:
    """One section of a report: a title, an optional line saying what it holds, its blocks."""

    title: str
    blocks: tuple[Markup, ...]
    intro: str = ""
    key: str = ""


# ---------------------------------------------------------------- blocks

def figure(svg: Markup, caption: str, numbers: Markup | None = None, open_numbers: bool = False) -> Markup:
    """A chart, its one-line caption (what to look for) and, beneath, the numbers it shows."""
    parts = [tag("div", svg, class_="chart"), tag("figcaption", caption)]
    if numbers is not None:
        parts.append(Markup(f"<details{' open' if open_numbers else ''}><summary>The numbers</summary>"
                            f"{numbers}</details>"))
    return tag("figure", join(parts))


def paragraph(text, class_: str | None = None) -> Markup:
    return tag("p", text, class_=class_)


def table(header: Sequence, rows: Iterable[Sequence], numeric: Sequence[bool] | None = None,
          class_: str = "numbers", head_rows: int = 0) -> Markup:
    """A table; ``numeric[i]`` right-aligns column i. A cell may be :class:`Markup` (a status cell)."""
    numeric = list(numeric) if numeric is not None else [False] + [True] * (len(header) - 1)
    head = join(tag("th", h, class_="n" if numeric[i] else None, scope="col") for i, h in enumerate(header))
    body = []
    for row in rows:
        cells = []
        for i, value in enumerate(row):
            if isinstance(value, Markup) and value.startswith("<td"):
                cells.append(value)
            elif i < head_rows:
                cells.append(tag("th", value, scope="row"))
            else:
                cells.append(tag("td", value, class_="n" if numeric[i] else None))
        body.append(tag("tr", join(cells)))
    return tag("div", tag("table", join([tag("thead", tag("tr", head)), tag("tbody", join(body))]), class_=class_),
               class_="scroll")


def status_cell(status: str | None, text: str = "", title: str | None = None, quiet_ok: bool = False) -> Markup:
    """A table cell for a status: its fill, and its shape and word written in the cell.

    ``quiet_ok`` writes only the shape ○ for ``ok`` (in a large grid, where the words of the
    few cells on watch or alert should stand out)."""
    look = palette.status_look(status)
    style = f"background:{look.fill};color:{look.ink}"
    if quiet_ok and status == "ok" or not status:
        # one line: the value and the shape (or the text alone when there is no status)
        content = join([text, f" {look.mark}" if status else ("" if text else look.mark)])
        return tag("td", content, class_="status quiet", style=style, title=title)
    content = join([tag("span", text, class_="value") if text else "", tag("span", f"{look.mark} {look.word}",
                                                                          class_="word")])
    return tag("td", content, class_="status", style=style, title=title)


def status_badge(status: str | None) -> Markup:
    look = palette.status_look(status)
    return tag("span", f"{look.mark} {look.word}", class_="badge",
               style=f"background:{look.fill};color:{look.ink}")


def status_legend() -> Markup:
    items = [status_badge(s) for s in ("ok", "watch", "alert")]
    return tag("p", join(["Statuses: ", *items, " — the word and the shape carry the status; the colour only repeats it."]),
               class_="legend")


def facts(pairs: Sequence[tuple[str, object]]) -> Markup:
    """A short list of labelled facts (a definition list)."""
    return tag("dl", join(join([tag("dt", k), tag("dd", v)]) for k, v in pairs), class_="facts")


# ---------------------------------------------------------------- the page

STYLE = f"""
:root {{ --ink:{palette.INK}; --muted:{palette.MUTED}; --rule:{palette.RULE}; --accent:{palette.REFERENCE.colour}; }}
* {{ box-sizing:border-box; }}
html {{ background:#f4f5f7; }}
body {{ margin:0 auto; max-width:1060px; padding:0 28px 40px; background:#fff; color:var(--ink);
  font:15px/1.45 "DejaVu Sans", "Liberation Sans", Arial, sans-serif; }}
header.stamp {{ padding:22px 0 14px; border-bottom:3px solid var(--accent); }}
header.stamp .kind {{ margin:0; font-size:13px; letter-spacing:.08em; text-transform:uppercase; color:var(--muted); }}
header.stamp h1 {{ margin:2px 0 10px; font-size:26px; }}
dl.facts {{ display:grid; grid-template-columns:max-content 1fr; gap:2px 16px; margin:0; font-size:14px; }}
dl.facts dt {{ color:var(--muted); }}
dl.facts dd {{ margin:0; overflow-wrap:anywhere; }}
nav.contents {{ margin:14px 0 0; font-size:14px; }}
nav.contents ol {{ margin:4px 0 0; padding-left:22px; columns:2; }}
section {{ padding:18px 0 6px; border-bottom:1px solid var(--rule); }}
section h2 {{ margin:0 0 6px; font-size:20px; }}
section h2 .number {{ color:var(--muted); margin-right:8px; }}
section > p.intro {{ margin:0 0 10px; color:var(--muted); }}
figure {{ margin:14px 0 18px; }}
figure .chart {{ break-inside:avoid; page-break-inside:avoid; }}
figure .chart svg {{ display:block; width:100%; height:auto; }}
figcaption {{ margin:4px 0 2px; font-weight:bold; font-size:14px; }}
details {{ margin:2px 0 0; font-size:13px; }}
details summary {{ cursor:pointer; color:var(--accent); }}
div.scroll {{ overflow-x:auto; }}
table {{ border-collapse:collapse; margin:6px 0; font-size:13px; }}
th, td {{ padding:3px 8px; border-bottom:1px solid var(--rule); text-align:left; vertical-align:top; }}
thead th {{ border-bottom:2px solid var(--ink); }}
tbody td:first-child, tbody th:first-child {{ white-space:nowrap; }}
td.n, th.n {{ text-align:right; font-variant-numeric:tabular-nums; white-space:nowrap; }}
td.status {{ text-align:center; white-space:nowrap; }}
td.status .value {{ display:block; font-variant-numeric:tabular-nums; }}
td.status .word {{ display:block; font-size:11px; }}
table.grid td, table.grid th {{ padding:2px 5px; font-size:12px; }}
table.grid th.month {{ white-space:nowrap; }}
table.grid thead th {{ text-align:center; vertical-align:bottom; }}
span.badge {{ display:inline-block; padding:0 6px; margin:0 2px; border:1px solid var(--rule); border-radius:3px; white-space:nowrap; }}
p.legend {{ font-size:13px; color:var(--muted); }}
p.note {{ font-size:13px; color:var(--muted); }}
footer.cautions {{ margin-top:22px; padding:12px 14px; border:2px solid var(--ink); font-size:14px; break-inside:avoid; }}
footer.cautions h2 {{ margin:0 0 4px; font-size:15px; }}
@page {{ size:A4; margin:14mm 12mm 16mm; }}
@media print {{
  html, body {{ background:#fff; }}
  body {{ max-width:none; padding:0; font-size:10.5pt; }}
  nav.contents {{ display:none; }}
  section {{ break-before:page; page-break-before:always; border-bottom:0; }}
  section:first-of-type {{ break-before:auto; page-break-before:auto; }}
  section h2, section h3 {{ break-after:avoid; page-break-after:avoid; }}
  /* a chart never splits, and its caption stays with it; the numbers beneath may run on */
  figcaption {{ break-before:avoid; page-break-before:avoid; }}
  details::details-content {{ content-visibility:visible; display:block; }}
  details summary {{ color:var(--ink); }}
  div.scroll {{ overflow:visible; }}
  table {{ font-size:8.5pt; }}
  table.grid td, table.grid th {{ font-size:7.5pt; padding:1px 3px; }}
  thead {{ display:table-header-group; }}
  tr {{ break-inside:avoid; }}
  td.status, span.badge {{ -webkit-print-color-adjust:exact; print-color-adjust:exact; }}
}}
"""


def _stamp(stamp: Stamp) -> Markup:
    pairs: list[tuple[str, object]] = [("model", stamp.model_name)]
    if len(stamp.versions) == 1:
        version, fp = stamp.versions[0]
        pairs += [("version", version), ("fingerprint", tag("code", fp))]
    else:
        pairs.append(("versions", join(join([f"{v} (fingerprint ", tag("code", fp), ")",
                                             "; " if i < len(stamp.versions) - 1 else ""])
                                       for i, (v, fp) in enumerate(stamp.versions))))
    rows = "" if stamp.rows is None else f", {stamp.rows:,} rows"
    pairs.append(("population", f"{stamp.population} on {stamp.engine}{rows}"))
    if stamp.as_of:
        pairs.append(("as of", stamp.as_of))
    pairs += list(stamp.extra)
    pairs += [("run at", stamp.run_at), ("made by", f"scoremon {stamp.tool_version}")]
    return tag("header", join([tag("p", stamp.title, class_="kind"),
                               tag("h1", f"{stamp.model_name}, version{'s' if len(stamp.versions) > 1 else ''} "
                                   + ", ".join(v for v, _ in stamp.versions)),
                               facts(pairs)]), class_="stamp")


def render_page(stamp: Stamp, sections: Sequence[Section], lead: Sequence[Markup] = ()) -> str:
    """The whole HTML document: stamp, contents, sections, cautions."""
    contents = tag("nav", join([tag("strong", "Contents"),
                                tag("ol", join(tag("li", tag("a", s.title, href=f"#{_anchor(s, i)}"))
                                               for i, s in enumerate(sections, start=1)))]),
                   class_="contents")
    body = [_stamp(stamp), *lead, contents]
    for number, section in enumerate(sections, start=1):
        heading = tag("h2", join([tag("span", str(number), class_="number"), section.title]))
        intro = [paragraph(section.intro, class_="intro")] if section.intro else []
        body.append(tag("section", join([heading, *intro, *section.blocks]), id=_anchor(section, number)))
    body.append(tag("footer", join([tag("h2", "Cautions"), paragraph(CAUTIONS)]), class_="cautions"))
    title = f"{stamp.title}: {stamp.model_name} version " + ", ".join(v for v, _ in stamp.versions)
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{escape(title)}</title><style>{STYLE}</style></head>"
            f"<body>{join(body)}</body></html>\n")


def _anchor(section: Section, number: int) -> str:
    return f"s{number}-{section.key}" if section.key else f"s{number}"


# ---------------------------------------------------------------- numbers as text

DASH = "–"


def percent(share: float | None, digits: int = 1, signed: bool = False) -> str:
    """``0.0512`` → ``5.1%``; None → a dash."""
    if share is None:
        return DASH
    share = round(share, digits + 2) + 0.0  # a share that rounds to zero is never written -0.0%
    return f"{share:+.{digits}%}" if signed else f"{share:.{digits}%}"


def number(value: float | None, digits: int = 3, signed: bool = False) -> str:
    if value is None:
        return DASH
    value = round(value, digits) + 0.0  # a value that rounds to zero is never written -0.000
    return f"{value:+,.{digits}f}" if signed else f"{value:,.{digits}f}"


def count(value: int | None) -> str:
    return DASH if value is None else f"{value:,}"
