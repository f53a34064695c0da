"""HTML reports with charts: one self-contained file per monitoring run, per diff, per history pack.

Each report has its own module and one entry point, taking the records its command already
computed (no query, no pass over rows) and returning the HTML text:

* :func:`~scoremon.report.html.monitor.monitor_html` — ``monitor_html(report: MonitorReport, engine: str) -> str``
* :func:`~scoremon.report.html.diff.diff_html` — ``diff_html(report: DiffReport, old: Spec, new: Spec, engine: str | None) -> str``
* :func:`~scoremon.report.html.pack.pack_html` — ``pack_html(history: History, engine: str) -> str``

The fit report is not built yet: it waits for the ``fit`` command and its result record. When
that lands it becomes ``fit.py`` with ``fit_html(report: FitReport, engine: str) -> str``,
drawn with the same toolkit — IV ranking; per characteristic WoE and event rate over its bins
with bin shares; the λ path (coefficients against log λ) and the cross-validated loss with its
error bars and the chosen λ marked; the development ROC curve and KS — and ``scoremon fit``
gains ``--html FILE``.

Shared pieces: :mod:`.page` (the page, stamp, sections, tables, status cells, cautions),
:mod:`.charts` (matplotlib to inline SVG, imported lazily), :mod:`.palette` (colours and
status marks, and why). The command line writes the text through :mod:`scoremon.files`, like
every other output.

This package imports no heavy library at import time: matplotlib loads on the first chart.
"""
