"""HTML reports with charts: one self-contained file per fit, per monitoring run, per diff, per history pack.

Each report has its own module and one entry point, taking the records its command already
computed (no query, no pass over rows) and returning the HTML text:

* :func:`~scoremon.report.html.monitor.monitor_html` — ``monitor_html(report: MonitorReport, engine: str) -> str``
* :func:`~scoremon.report.html.diff.diff_html` — ``diff_html(report: DiffReport, old: Spec, new: Spec, engine: str | None) -> str``
* :func:`~scoremon.report.html.pack.pack_html` — ``pack_html(history: History, engine: str) -> str``
* :func:`~scoremon.report.html.fit.fit_html` — ``fit_html(report: FitReport, engine: str) -> str``

Shared pieces: :mod:`.page` (the page, stamp, sections, tables, status cells, cautions),
:mod:`.charts` (matplotlib to inline SVG, imported lazily), :mod:`.palette` (colours and
status marks, and why). The command line writes the text through :mod:`scoremon.files`, like
every other output.

This package imports no heavy library at import time: matplotlib loads on the first chart.
"""
