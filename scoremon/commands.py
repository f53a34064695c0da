"""What each command does: calls into :mod:`scoremon.api` and prints through :mod:`scoremon.report`.

:mod:`scoremon.cli` reads the arguments and imports this module only once a command runs, so
``scoremon --help`` and ``scoremon --version`` load none of what the commands need. Each function
takes the parsed arguments and returns the exit code (see :mod:`scoremon.cli`).
"""
from __future__ import annotations

import time
from datetime import date, datetime, timezone
from pathlib import Path

from . import api, files, outputs
from .engines.urls import redact
from .errors import InputError, SpecError
from .report import terminal
from .report.json import to_json
from .report.markdown import diff_markdown
from .report.terminal import bench as bench_view
from .report.terminal import binning as binning_view
from .report.terminal import diff as diff_view
from .report.terminal import fit as fit_view
from .report.terminal import monitor as monitor_view
from .report.terminal import score as score_view
from .spec import fingerprint
from .spec.schema import schema_text

EXIT_OK, EXIT_FOUND = 0, 1


def check(args) -> int:
    spec = api.load_spec(args.spec)
    terminal.print_check_ok(args.spec, spec, fingerprint(spec))
    return EXIT_OK


def compile_(args) -> int:
    out = _file_output(args.out, "--out", args.replace, [("the spec", args.spec)])
    spec = api.load_spec(args.spec)
    sql = api.compile_sql(spec, args.dialect, args.table, args.key or ())
    if out:
        files.write_text(out, sql + ";\n")
        terminal.print_text(f"wrote {args.out}")
    else:
        terminal.print_text(sql + ";")
    return EXIT_OK


def score(args) -> int:
    if (args.out_table is None) == (args.out is None):
        raise InputError("give --out-table NAME (a table in --db) or --out FILE.parquet (or .csv), one of the two")
    if args.out is not None:
        outputs.file_format(args.out)
        _file_output(args.out, "--out", args.replace, [("the spec", args.spec), ("the input file", args.input),
                                                         *outputs.kept_database(args.db)])
    spec = api.load_spec(args.spec)
    source = api.source_relation(table=args.table, file=args.input)
    if args.input is None and args.out_table is not None:  # only writing a table may start a new database
        outputs.require_database_file(args.db)
    # writing a file reads the database and writes nothing to it
    engine = api.open_engine(args.db, threads=args.threads, read_only=args.out_table is None)
    try:
        with terminal.progress_bar("scoring") as progress:
            result = api.score(spec, engine, source, args.key or (), args.out_table, args.out, progress,
                               replace=args.replace, allow_empty=args.allow_empty, reason_text=args.reason_text)
    finally:
        engine.close()
    score_view.print_score_result(result)
    terminal.print_cautions()
    return EXIT_OK


def schema(args) -> int:
    out = _file_output(args.out, "--out", args.replace, [])
    if out:
        files.write_text(out, schema_text())
        terminal.print_text(f"wrote {args.out}")
    else:
        terminal.print_text(schema_text())
    return EXIT_OK


def _load_both(old_path: str, new_path: str):
    """Both specs, or one SpecError listing the problems of both files."""
    specs, problems = [], []
    for path in (old_path, new_path):
        try:
            specs.append(api.load_spec(path))
        except SpecError as error:
            problems += error.problems
    if problems:
        raise SpecError(problems)
    return specs


def _file_output(path: str | None, option: str, replace: bool, kept) -> Path | None:
    """``path`` once it is known that writing there destroys nothing (see :mod:`scoremon.outputs`)."""
    if path is None:
        return None
    outputs.refuse_file(path, option, kept)
    return files.check_output(path, option, replace)


def diff(args) -> int:
    population = args.table is not None or args.input is not None
    if not population:
        given = [name for name, value in (("--db", args.db), ("--outcome", args.outcome), ("--cutoff", args.cutoff),
                                          ("--new-cutoff", args.new_cutoff)) if value is not None]
        if given:
            raise InputError(f"{', '.join(given)} describe the population; also give --table (with --db) or --input")
    if args.table is not None and args.db is None:
        raise InputError("--table names a table in a database; give the database with --db (or use --input FILE)")
    kept = [("the old spec", args.old), ("the new spec", args.new), ("the input file", args.input),
            *outputs.kept_database(args.db)]
    json_file = _file_output(args.json, "--json", args.replace, kept)
    markdown_file = _file_output(args.markdown, "--markdown", args.replace, kept)
    html_file = _file_output(args.html, "--html", args.replace, kept)
    old, new = _load_both(args.old, args.new)
    diff = api.diff_models(old, new, args.old, args.new)
    impact = None
    dialect = None
    if population:
        engine = api.open_engine(args.db, read_only=True)
        dialect = engine.dialect
        try:
            source = api.source_relation(table=args.table, file=args.input)
            where = f"table {args.table} in {redact(args.db)}" if args.table is not None else f"file {args.input}"
            with terminal.progress_bar("scoring both versions") as progress:
                impact = api.measure_impact(old, new, engine, source, where, args.outcome, args.cutoff,
                                            args.new_cutoff, progress)
        finally:
            engine.close()
    report = api.DiffReport(diff, impact, datetime.now(timezone.utc).isoformat(timespec="seconds"))
    diff_view.print_diff(report)
    for target, text in ((json_file, lambda: to_json(report)), (markdown_file, lambda: diff_markdown(report))):
        if target is not None:
            files.write_text(target, text() + "\n")
            terminal.print_text(f"wrote {target}")
    if html_file is not None:
        from .report.html.diff import diff_html  # the report modules: loaded only when a report is asked for

        _write_html(html_file, lambda: diff_html(report, old, new, dialect))
    return EXIT_OK if diff.is_equivalent else EXIT_FOUND


def _build_html(build) -> tuple[str, float]:
    """A report's HTML text, and the seconds it took to build."""
    started = time.perf_counter()
    return build(), time.perf_counter() - started


def _write_built_html(target: Path, text: str, seconds: float) -> None:
    """Write a built report whole (the target was checked before the run); say how long it took."""
    files.write_text(target, text)
    terminal.print_text(f"wrote {target} ({seconds:.1f} s)")


def _write_html(target: Path, build) -> None:
    _write_built_html(target, *_build_html(build))


def bench(args) -> int:
    # the benchmark's modules bring numpy, pandas and DuckDB: imported when it runs, not at start-up
    from .bench import BenchSettings, run_bench
    from .bench.engines import EngineBenchSettings, run_engine_bench

    if args.engines is not None:
        engine_settings = EngineBenchSettings(tuple(args.engines), args.engine_rows, args.repeat, args.threads)
        report = run_engine_bench(engine_settings, bench_view.TerminalObserver())
        bench_view.print_bench_report(report)
        return EXIT_OK
    settings = BenchSettings(rows=args.rows, repeat=args.repeat, threads=args.threads, memory_rows=args.memory_rows,
                             skip_memory=args.skip_memory, memory_limit=args.memory_limit, folder=args.folder,
                             fit_only=args.fit_only, fit_repeat=args.fit_repeat)
    report = run_bench(settings, bench_view.TerminalObserver())
    bench_view.print_bench_report(report)
    return EXIT_FOUND if any(line.goal_met is False for line in report.lines) else EXIT_OK


def baseline(args) -> int:
    # the monitor's modules load sqlglot and the engines: imported when a command needs them, so
    # that `scoremon check` starts without them
    from .monitor.baseline import small_baseline_warning
    from .monitor.months import MONTHS_IN_RANGE, check_months_in_range, out_of_range_note

    if files.is_same_file(args.out, args.spec):
        raise InputError(f"--out {args.out} is the spec itself; a spec is never overwritten in place, give a new "
                         "file name")
    out = _file_output(args.out, "--out", args.replace, outputs.kept_database(args.db))
    months_in_range = check_months_in_range(MONTHS_IN_RANGE if args.months_in_range is None else args.months_in_range)
    spec = api.load_spec(args.spec)
    engine = api.open_engine(args.db, read_only=True)  # the baseline goes to a spec file, not the database
    try:
        source = api.source_relation(table=args.table)
        baseline = api.measure_development(spec, engine, source, args.outcome, args.month_column,
                                           computed_from=f"table {args.table}", months_in_range=months_in_range)
    finally:
        engine.close()
    written = api.write_spec_with_baseline(args.spec, baseline, out, replace=args.replace)
    monitor_view.print_baseline_written(str(written), baseline, fingerprint(spec))
    warning = small_baseline_warning(baseline.rows)
    if warning:
        terminal.print_problems([warning])
    if baseline.rows_out_of_range:
        note = out_of_range_note(baseline.rows_out_of_range, date.today(), months=months_in_range)
        terminal.print_problems([f"note: {note}"])
    return EXIT_OK


def bin_(args) -> int:
    kept = [("the binning file being recounted", args.recount), *outputs.kept_database(args.db)]
    out = _file_output(args.out, "--out", args.replace, kept)
    edited = None
    if args.recount:
        edited = api.read_binning(args.recount, counted=False)
        given = [name for name, value in (("--features", args.features), ("--exclude", args.exclude),
                                          ("--categorical", args.categorical)) if value]
        if given:
            raise InputError(f"{', '.join(given)}: a recount counts the features of {args.recount} as written; "
                             "remove them from the file instead")
    else:
        missing = [name for name, value in (("--table", args.table), ("--outcome", args.outcome)) if value is None]
        if missing:
            raise InputError(f"give {' and '.join(missing)} (or --recount FILE to recount a binning file)")
        settings = api.Settings(fine_classes=args.fine_classes, min_share=args.min_share, min_events=args.min_events,
                                trend=args.trend, max_bins=args.max_bins)
    engine = api.open_engine(args.db, read_only=True)  # the bins go to a file, not the database
    try:
        with terminal.progress_bar("recounting" if edited else "binning") as progress:
            if edited is not None:
                report = api.recount_binning(engine, edited, args.table, args.outcome, args.key, args.month_column,
                                             progress)
            else:
                report = api.bin_development(engine, args.table, args.outcome, args.key, args.month_column,
                                             args.features, args.exclude or (), settings, progress,
                                             args.categorical)
    finally:
        engine.close()
    written = api.write_binning(report.binning, out, replace=args.replace)
    binning_view.print_bin_report(report, str(written))
    return EXIT_OK


def fit(args) -> int:
    kept = [("the binning file", args.binning), *outputs.kept_database(args.db)]
    out = _file_output(args.out, "--out", args.replace, kept)
    json_file = _file_output(args.json, "--json", args.replace, kept + [("--out", args.out)])
    html_file = _file_output(args.html, "--html", args.replace, kept + [("--out", args.out), ("--json", args.json)])
    binning = api.read_binning(args.binning)
    alpha = api.penalty_alpha(args.penalty, args.alpha)
    settings = api.FitSettings(
        penalty=args.penalty, alpha=alpha, folds=args.folds, lambdas=args.lambdas, lambda_ratio=args.lambda_ratio,
        cv_metric=args.cv_metric, one_se=args.one_se, min_iv=args.min_iv, max_correlation=args.max_correlation,
        keep=tuple(args.keep or ()), drop=tuple(args.drop or ()), key=args.key if args.key else binning.key,
        base_score=args.base_score, base_odds=args.base_odds, pdo=args.pdo, rounding=args.rounding,
        grades=args.grades)
    naming = api.Naming(name=args.name or (args.table or binning.table), version=args.model_version,
                        owner=args.owner, event=args.event or "",
                        performance_window_months=args.performance_window)
    engine = api.open_engine(args.db, read_only=True)  # the model goes to a spec file, not the database
    try:
        spec, report = api.fit_spec(engine, binning, settings, naming, out, args.table, args.outcome,
                                    args.month_column, args.replace)
    finally:
        engine.close()
    # every report is made before anything is written, so that a failing report leaves no spec
    # behind without it
    json_text = None if json_file is None else to_json(report) + "\n"
    html = None
    if html_file is not None:
        from .report.html.fit import fit_html  # the report modules: loaded only when a report is asked for

        html = _build_html(lambda: fit_html(report, engine.dialect))
    api.write_spec(spec, out, args.replace, binning.file or "")
    if json_text is not None:
        files.write_text(json_file, json_text)
    fit_view.print_fit_report(report)
    if html is not None:
        _write_built_html(html_file, *html)
    return EXIT_OK


def monitor(args) -> int:
    from .monitor.months import MONTHS_IN_RANGE, check_months_in_range  # with sqlglot, as in baseline

    months_in_range = check_months_in_range(MONTHS_IN_RANGE if args.months_in_range is None else args.months_in_range)
    spec = api.load_spec(args.spec)
    thresholds = api.load_thresholds(args.thresholds)
    as_of = _date(args.as_of, "--as-of") if args.as_of else datetime.now(timezone.utc).date()
    months = None
    if args.baseline_months:
        first, _, last = args.baseline_months.partition(":")
        months = (api.parse_month(first, "--baseline-months start"), api.parse_month(last or first, "--baseline-months end"))
        if months[1] < months[0]:
            raise InputError(f"--baseline-months {args.baseline_months}: the end comes before the start")
    kept = [("the spec", args.spec), ("the thresholds file", args.thresholds), *outputs.kept_database(args.db)]
    json_file = _file_output(args.json, "--json", args.replace, kept)
    html_file = _file_output(args.html, "--html", args.replace, kept)
    if not args.no_history:  # the history is written: the database must exist all the same
        outputs.require_database_file(args.db)
    engine = api.open_engine(args.db, read_only=args.no_history)
    dialect = engine.dialect
    try:
        report = api.monitor(spec, engine, args.table, args.month_column, as_of, args.outcome, thresholds,
                             args.baseline_table, months, record_history=not args.no_history,
                             months_in_range=months_in_range,
                             expected_rows=_expected_rows(args.expected_rows), two_sided=args.two_sided)
    finally:
        engine.close()
    monitor_view.print_monitor_report(report, history_written=not args.no_history)
    if json_file is not None:
        files.write_text(json_file, to_json(report) + "\n")
        terminal.print_text(f"wrote {json_file}")
    if html_file is not None:
        from .report.html.monitor import monitor_html  # the report modules: loaded only when a report is asked for

        _write_html(html_file, lambda: monitor_html(report, dialect))
    return EXIT_FOUND if report.has_alert else EXIT_OK


def _expected_rows(text: str) -> str | float:
    if text in ("trailing", "development"):
        return text
    try:
        value = float(text.replace(",", "").replace("_", ""))
    except ValueError:
        value = 0.0
    if not value > 0 or value == float("inf"):
        raise InputError(f"--expected-rows {text!r}: give trailing, development or a positive monthly count, "
                         "e.g. 12000")
    return value


def pack(args) -> int:
    if args.runs and (args.first or args.last):
        raise InputError("give --runs, or a range of months with --from and --to, not both")
    first = str(api.parse_month(args.first, "--from")) if args.first else None
    last = str(api.parse_month(args.last, "--to")) if args.last else None
    if first and last and last < first:
        raise InputError(f"--from {first} --to {last}: the end comes before the start")
    html_file = _file_output(args.html, "--html", args.replace, [("the spec", args.model),
                                                                 *outputs.kept_database(args.db)])
    model = api.model_name_of(args.model)
    engine = api.open_engine(args.db, read_only=True)  # a pack only reads: the file must exist, and is left as it was
    try:
        history = api.read_history(engine, model, tuple(args.runs or ()), first, last)
    finally:
        engine.close()
    if not any(history.figures.values()):
        raise InputError(f"the runs of {model} measured no month in {first or 'the first month'} to "
                         f"{last or 'the last month'}; widen the range")
    from .report.html.pack import pack_html  # the report modules: loaded only when a report is asked for

    _write_html(html_file, lambda: pack_html(history, engine.dialect))
    return EXIT_OK


def _date(text: str, option: str):
    try:
        return datetime.strptime(text, "%Y-%m-%d").date()
    except ValueError:
        raise InputError(f"{option} {text!r} is not a date; write it as YYYY-MM-DD, e.g. 2026-11-30") from None


def demo(args) -> int:
    from demo_warehouse.run import run_demo

    return run_demo(args)
