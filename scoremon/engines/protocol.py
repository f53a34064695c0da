"""What scoremon needs from a SQL engine: the :class:`Engine` protocol, and what it hands back.

The caller builds, the engine renders: every method takes a sqlglot tree and renders it itself
for its own dialect (through :func:`scoremon.dialects.render_sql`), so no caller ever holds SQL
text. Results come back as named :class:`Row` values (or a DataFrame for large results), so no
caller decodes a row by position; :meth:`Engine.describe` gives each column a portable
:data:`KINDS` kind (:mod:`.columns` parses the engine's type names once). What an engine can do
is declared on it (:attr:`Engine.is_transactional`, :attr:`Engine.reads_files`,
:attr:`Engine.writes_parquet`), never decided by asking which class it is.

Every method takes a ``purpose`` — a few words such as "writing the scored table" — that an
:class:`~scoremon.errors.EngineError` names when the database refuses, together with the engine,
keeping the driver's error as its cause.

>>> from sqlglot import exp
>>> from scoremon.engines import open_engine
>>> from scoremon.trees import alias, column, integer, table_path, text
>>> with open_engine(":memory:") as engine:
...     engine.write_table(exp.select(alias(integer(7), "n"), alias(text("a"), "word")), ["t"], "making a table")
...     [column.kind for column in engine.describe(exp.select(exp.Star()).from_(table_path(["t"])), "reading types")]
...     row = engine.query(exp.select(column("n"), column("word")).from_(table_path(["t"])), "reading t")[0]
...     row.n, row["word"]
['integer', 'text']
(7, 'a')

Kept in its own module so every implementation can import it without importing the package
facade (and so without importing each other).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Callable, Iterator, Mapping, Protocol, Sequence, Union

from sqlglot import exp

from ..dialects import render_sql
from ..errors import EngineError

if TYPE_CHECKING:  # pandas is heavy: imported by the engines only when a frame is asked for
    import pandas as pd

Progress = Callable[[float], None]  # called with the share done, 0.0 to 1.0

# (column name, kind) with kind one of scoremon.dialects.COLUMN_KINDS: what write_rows creates
ColumnSpec = tuple[str, str]

# The portable kinds :meth:`Engine.describe` gives a column, whatever the engine calls its type.
NUMERIC, INTEGER, TEXT, BOOLEAN, DATE, OTHER = "numeric", "integer", "text", "boolean", "date", "other"
KINDS = (NUMERIC, INTEGER, TEXT, BOOLEAN, DATE, OTHER)


@dataclass(frozen=True)
class Column:
    """One column of a query as :meth:`Engine.describe` sees it.

    ``kind`` is one of :data:`KINDS` (``numeric`` is any non-integer number: floating point or
    decimal; ``date`` includes timestamps; ENUM and other text-like types are ``text``).
    ``type_name`` is the engine's own spelling, for messages. ``can_hold_nan`` says
    whether the column's type can hold NaN or ±infinity (floating point, and PostgreSQL's
    NUMERIC; DuckDB's and Spark's DECIMAL cannot).
    """

    name: str
    kind: str
    type_name: str
    can_hold_nan: bool = False

    @property
    def is_number(self) -> bool:
        return self.kind in (NUMERIC, INTEGER)


class Row(Mapping[str, Any]):
    """One result row: values by column name, as ``row["name"]`` or ``row.name``.

    Iterating gives the column names (it is a mapping); there is deliberately no access by
    position. Rows of one result share their name index.
    """

    __slots__ = ("_index", "_values")

    def __init__(self, index: Mapping[str, int], values: Sequence[Any]):
        self._index = index
        self._values = values

    def __getitem__(self, name: str) -> Any:
        return self._values[self._index[name]]

    def __getattr__(self, name: str) -> Any:
        try:
            return self._values[self._index[name]]
        except KeyError:
            raise AttributeError(f"the row has no column {name!r}; it has {', '.join(self._index)}") from None

    def __iter__(self) -> Iterator[str]:
        return iter(self._index)

    def __len__(self) -> int:
        return len(self._index)

    def __repr__(self) -> str:
        return "Row(" + ", ".join(f"{name}={self[name]!r}" for name in self._index) + ")"


def first_line(error: BaseException) -> str:
    """The first line of a driver's message (the rest is context or a stack), or the error's type."""
    text = str(error).strip()
    return text.splitlines()[0] if text else type(error).__name__


def named_rows(names: Sequence[str], values: Sequence[Sequence[Any]]) -> list[Row]:
    """Rows of values (each in ``names`` order) as :class:`Row` values; for engine implementations."""
    index = {name: position for position, name in enumerate(names)}
    if len(index) != len(names):
        raise ValueError(f"a result names a column twice: {', '.join(names)}")  # a bug: queries alias every column
    return [Row(index, tuple(row)) for row in values]


@dataclass(frozen=True)
class Statement:
    """A tree rendered once for one engine (:meth:`Engine.prepare`), to run many times unchanged:
    the benchmark times the query, not its rendering. ``sql`` is the text, for reading only."""

    sql: str
    dialect: str


Query = Union[exp.Expression, Statement]  # what every engine method runs: a tree, or a tree prepared for it


class Engine(Protocol):
    """What scoremon needs from a SQL engine.

    ``dialect`` names the :mod:`scoremon.dialects` rendering the engine runs. The engines
    subclass this protocol, and so share its rendering (:meth:`prepare`) and context manager
    (``with open_engine(url) as engine:`` closes it on the way out).
    """

    dialect: str
    ignores_column_case: bool  # a query's column names match the table's ignoring case (DuckDB, Spark by default)
    label: str  # the engine as messages name it, e.g. "duckdb" or "postgres postgresql://scorer@db/book"
    _driver_errors: tuple[type[BaseException], ...]  # the driver's exceptions, raised again as EngineError
    # Capabilities: what the engine can do, declared, so that no caller asks which engine it is.
    is_transactional: bool  # execute_atomically and the writes are all or nothing
    reads_files: bool  # a query may read Parquet/CSV files in place (read_parquet, read_csv)
    writes_parquet: bool  # write_parquet (and write_file, Parquet or CSV) works
    # hold/batches/release work: the engine runs in this process, so a query's rows may be read
    # in batches into numpy without crossing a network (the fit's passes, scoremon.develop.streamed)
    streams_batches: bool
    # threads a consumer of batches may work with beside the engine (the cores it was given)
    worker_threads: int

    def execute(self, statement: Query, purpose: str) -> None:
        """Run one statement (a CREATE, a DROP, an INSERT); nothing is returned."""

    def query(self, tree: Query, purpose: str, progress: Progress | None = None) -> list[Row]:
        """All rows of a query as named :class:`Row` values (float, int, str, date, None, …)."""

    def query_frame(self, tree: Query, purpose: str) -> pd.DataFrame:
        """All rows of a query as a pandas DataFrame (for results too large for rows)."""

    def describe(self, tree: Query, purpose: str) -> list[Column]:
        """Each column of a query with its portable kind, without reading its rows."""

    def explain(self, tree: Query, purpose: str) -> str:
        """The engine's plan of a query, as its EXPLAIN prints it (verbose where it can be)."""

    def write_table(self, tree: Query, table: Sequence[str], purpose: str, progress: Progress | None = None) -> None:
        """Replace ``table`` (``[name]`` or ``[schema, name]``) with the result of a query, all or nothing."""

    def write_rows(self, table: Sequence[str], columns: Sequence[ColumnSpec], rows: Sequence[Sequence[Any]],
                   purpose: str) -> None:
        """Replace ``table`` with ``rows`` (None is NULL; float NaN and ±inf are kept), all or nothing."""

    def write_parquet(self, tree: Query, path: Any, purpose: str, progress: Progress | None = None) -> None:
        """Write the result of a query to a Parquet file, whole or not at all (only when
        :attr:`writes_parquet`; otherwise raises :class:`~scoremon.errors.InputError`)."""

    def write_file(self, tree: Query, path: Any, purpose: str, progress: Progress | None = None,
                   file_format: str = "parquet") -> None:
        """Write the result of a query to a ``parquet`` or ``csv`` file, whole or not at all (only
        when :attr:`writes_parquet`, which covers CSV too; otherwise raises
        :class:`~scoremon.errors.InputError`)."""

    def execute_atomically(self, statements: Sequence[Query], purpose: str) -> None:
        """Run ``statements`` in order in one transaction: all take effect, or (on any error) none.
        Where :attr:`is_transactional` is false this is best effort (see the engine)."""

    def hold(self, tree: Query, purpose: str) -> list[str]:
        """Keep the rows of a query in a temporary table of this connection; returns its path
        (only when :attr:`streams_batches`)."""

    def batches(self, tree: Query, purpose: str, rows: int) -> Iterator[dict[str, Any]]:
        """The rows of a query as numpy arrays per column, ``rows`` at most at a time (only when
        :attr:`streams_batches`)."""

    def release(self, table: Sequence[str]) -> None:
        """Drop a table made by :meth:`hold` (only when :attr:`streams_batches`)."""

    def close(self) -> None:
        """Release the connection (a shared Spark session is left running)."""

    # -- shared by every engine

    def prepare(self, tree: exp.Expression, for_parquet: bool = False) -> Statement:
        """``tree`` rendered for this engine once (``for_parquet``: its rows go to a Parquet file)."""
        return Statement(render_sql(tree, self.dialect, pretty=False, for_parquet=for_parquet), self.dialect)

    def _sql(self, query: Query) -> str:
        if isinstance(query, Statement):
            if query.dialect != self.dialect:
                raise ValueError(f"a statement prepared for {query.dialect} was run on {self.dialect}")  # a bug
            return query.sql
        if isinstance(query, exp.Expression):
            return render_sql(query, self.dialect, pretty=False)
        raise TypeError(f"an engine runs sqlglot trees, not {type(query).__name__}")  # a bug in the caller

    def _run(self, work: Callable[[], Any], purpose: str) -> Any:
        """``work()``, with the driver's errors (``_driver_errors``) raised as :class:`EngineError`."""
        try:
            return work()
        except self._driver_errors as error:
            raise EngineError(purpose, self.label, first_line(error)) from error

    def __enter__(self):
        return self

    def __exit__(self, *exc_info) -> None:
        self.close()
