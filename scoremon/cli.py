"""The command line: arguments, calls into :mod:`scoremon.api`, printing, exit codes.

Exit codes: 0 success; 1 the run found what it looks for (an alert, a difference);
2 invalid input (a spec, a table, a column, an option), with one line per problem.
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import api
from .dialects import DIALECTS
from .errors import InputError, ScoremonError, SpecError
from .report import terminal
from .report.terminal import score as score_view
from .spec import fingerprint
from .spec.schema import schema_text

EXIT_OK, EXIT_FOUND, EXIT_INVALID = 0, 1, 2


def _check(args) -> int:
    spec = api.load_spec(args.spec)
    terminal.print_check_ok(args.spec, spec, fingerprint(spec))
    return EXIT_OK


def _compile(args) -> int:
    spec = api.load_spec(args.spec)
    sql = api.compile_sql(spec, args.dialect, args.table, args.key or ())
    if args.out:
        Path(args.out).write_text(sql + ";\n", encoding="utf-8")
        terminal.print_text(f"wrote {args.out}")
    else:
        terminal.print_text(sql + ";")
    return EXIT_OK


def _score(args) -> int:
    spec = api.load_spec(args.spec)
    if (args.out_table is None) == (args.out is None):
        raise InputError("give --out-table NAME (a table in --db) or --out FILE.parquet, one of the two")
    engine = api.open_engine(args.db, threads=args.threads)
    try:
        source = api.source_relation(table=args.table, file=args.input)
        with terminal.progress_bar("scoring") as progress:
            result = api.score(spec, engine, source, args.key or (), args.out_table, args.out, progress)
    finally:
        engine.close()
    score_view.print_score_result(result)
    terminal.print_cautions()
    return EXIT_OK


def _schema(args) -> int:
    if args.out:
        Path(args.out).write_text(schema_text(), encoding="utf-8")
        terminal.print_text(f"wrote {args.out}")
    else:
        terminal.print_text(schema_text())
    return EXIT_OK


def _demo(args) -> int:
    from demo_warehouse.run import run_demo

    return run_demo(args)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="scoremon",
        description="Keep a logistic-regression scoring model as a YAML spec, score with SQL, monitor it.",
        epilog="exit codes: 0 ok; 1 something found (alert, difference); 2 invalid input",
    )
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    check = commands.add_parser("check", help="validate a spec; every problem with file:line:column")
    check.add_argument("spec", help="the spec file (YAML)")
    check.set_defaults(run=_check)

    compile_ = commands.add_parser("compile", help="print the scoring SQL for a spec")
    compile_.add_argument("spec")
    compile_.add_argument("--dialect", default="duckdb", choices=sorted(DIALECTS), help="SQL dialect (default duckdb)")
    compile_.add_argument("--table", default="input", help="table the SQL reads (default: input)")
    compile_.add_argument("--key", action="append", help="a column passed through to the output (repeatable)")
    compile_.add_argument("--out", help="write the SQL to this file instead of printing it")
    compile_.set_defaults(run=_compile)

    score = commands.add_parser("score", help="score a table, Parquet or CSV file inside DuckDB")
    score.add_argument("spec")
    score.add_argument("--db", default=None, help="DuckDB database file (default: in memory)")
    source = score.add_mutually_exclusive_group(required=True)
    source.add_argument("--table", help="table in --db to score (NAME or SCHEMA.NAME)")
    source.add_argument("--input", help="Parquet or CSV file to score")
    score.add_argument("--key", action="append", help="a column passed through to the output (repeatable)")
    score.add_argument("--out-table", help="write the scores to this table in --db (replaced whole)")
    score.add_argument("--out", help="write the scores to this Parquet file (replaced whole)")
    score.add_argument("--threads", type=int, default=None, help="DuckDB threads (default: all cores)")
    score.set_defaults(run=_score)

    schema = commands.add_parser("schema", help="print the spec's JSON Schema (for editors)")
    schema.add_argument("--out", help="write it to this file")
    schema.set_defaults(run=_schema)

    demo = commands.add_parser("demo", help="build the demo warehouse and run the whole job on it")
    demo.add_argument("--rows", type=int, default=None, help="applications in the demo book (default: about 400,000)")
    demo.add_argument("--folder", default=None, help="where the demo warehouse is written (default: a temporary folder)")
    demo.set_defaults(run=_demo)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run one command; return its exit code (see the module docstring)."""
    args = build_parser().parse_args(argv)
    try:
        return args.run(args)
    except SpecError as error:
        terminal.print_problems([str(p) for p in error.problems])
        return EXIT_INVALID
    except ScoremonError as error:
        terminal.print_problems([f"error: {line}" if i == 0 else line for i, line in enumerate(str(error).splitlines())])
        return EXIT_INVALID
    except KeyboardInterrupt:
        terminal.print_problems(["interrupted; nothing was written"])
        return 130


if __name__ == "__main__":
    sys.exit(main())
