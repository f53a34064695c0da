"""The fit's passes on an engine in this process (DuckDB): bin numbers held once, sums in numpy.

A fit makes dozens of passes over one design. Binning every row (the scoring query's CASE
per characteristic) costs more than the sums themselves, and ~150 SUMs of products per model
cost several bare scans in SQL (``scoremon bench`` line (i)). Where the engine streams
batches (:attr:`~scoremon.engines.Engine.streams_batches`), :class:`StreamedPasses` therefore

1. runs the binning once: fold, y and each characteristic's bin number (the same
   :func:`scoremon.compiler.bin_case`, yielding the bin's position instead of its WoE) into a
   temporary table of small integers, held by the engine (spilled to disk beyond its memory
   limit);
2. per pass reads that table in batches of :data:`BATCH_ROWS` rows, looks each bin's WoE up
   (:func:`scoremon.develop.design.woe_values`, in the CASE's bin order) and sums gradient,
   Hessian (when the pass asks for it), loss and extreme rows per fold with numpy (the sums
   :func:`scoremon.develop.design.pass_query` makes; μ, √w and the loss from one exponential,
   :class:`_RowTerms`), several batches at once on the engine's
   :attr:`~scoremon.engines.Engine.worker_threads`, added in the batches' order. Memory is
   bounded by the batches in flight, not the table.

The held-out histograms stay aggregate queries (:class:`~scoremon.develop.design.EnginePasses`),
over the held table (:meth:`StreamedPasses.design_rows`).
Engines that do not stream (PostgreSQL, Spark) keep :class:`EnginePasses`: nothing row-level
leaves them. :func:`open_passes` picks one and drops the temporary table afterwards.
"""
from __future__ import annotations

import queue
from collections import deque
from concurrent.futures import ThreadPoolExecutor
from contextlib import contextmanager
from typing import Iterator, Mapping, Sequence

import numpy as np
from sqlglot import exp
from threadpoolctl import threadpool_limits

from ..compiler import bin_case, column, integer, number
from ..spec.terms import feature_terms
from ..trees import table_path
from .folds import fold_expression
from .design import FOLD, Y, Design, EnginePasses, woe_spec, woe_values, x_column
from .newton import EXTREME_ETA, FoldSums

BATCH_ROWS = 1 << 18  # 262,144 rows: the batch's float design is 2 MiB per column


def bin_column(j: int) -> str:
    return f"__scoremon_bin_{j}"


def _small(value: exp.Expression) -> exp.Cast:
    return exp.Cast(this=value, to=exp.DataType(this=exp.DataType.Type.SMALLINT))


def codes_query(design: Design) -> exp.Select:
    """SELECT fold, y, bin_1 … bin_p: per row its fold, outcome and bin numbers, as SMALLINT,
    ordered by fold."""
    spec = woe_spec(design.features)
    fold = integer(0) if design.fold_count == 1 else fold_expression(column(design.key), design.fold_count)
    selected = [exp.alias_(_small(fold), FOLD, quoted=True), exp.alias_(_small(design.event.copy()), Y, quoted=True)]
    for j, feature in enumerate(spec.features, start=1):
        count = len(feature_terms(spec, feature).bins)
        found = bin_case(spec, feature, column(feature.column or feature.name), [integer(b) for b in range(count)])
        selected.append(exp.alias_(_small(found), bin_column(j), quoted=True))
    query = exp.select(*selected).from_(design.source.copy())
    # in fold order, so that a batch's rows of one fold are one slice (no sort per pass)
    return query if design.fold_count == 1 else query.order_by(column(FOLD))


class StreamedPasses(EnginePasses):
    """The fit's passes over bin numbers held in ``engine`` (see the module docstring)."""

    def __init__(self, engine, design: Design):
        super().__init__(engine, design)
        self.woe = [np.asarray(values, dtype=float) for values in woe_values(design.features)]
        self.threads = max(1, engine.worker_threads)
        self._scratch: list[_Scratch] = []
        self.table = engine.hold(codes_query(design), "binning the development rows once for the fit")

    def close(self) -> None:
        self.engine.release(self.table)

    def design_rows(self) -> exp.Select:
        """The design's rows read from the held table: each WoE found from its bin number by a
        CASE on that small integer, the fold as held. The same values as
        :func:`~scoremon.develop.design.design_query` without its binning and its md5 of the key
        per row, which cost the held-out histograms more than their sorting (bench rows)."""
        selected = [column(FOLD), exp.alias_(exp.Cast(this=column(Y), to=exp.DataType.build("DOUBLE")), Y, quoted=True)]
        for j, values in enumerate(self.woe, start=1):
            found = exp.Case(this=column(bin_column(j)), ifs=[
                exp.If(this=integer(b), true=number(float(v))) for b, v in enumerate(values)])
            selected.append(exp.alias_(found, x_column(j), quoted=True))
        return exp.select(*selected).from_(table_path(self.table))

    def __call__(self, betas: Mapping[int, np.ndarray], hessian: bool = True, rough: bool = False) -> dict[int, FoldSums]:
        self.count += 1
        p, k = self.design.columns, self.fold_count
        betas = {m: np.asarray(b, dtype=float) for m, b in betas.items()}
        total = {m: FoldSums(np.zeros((k, p)), np.zeros((k, p, p)) if hessian else None, np.zeros(k), np.zeros(k),
                             np.zeros(k)) for m in betas}
        read = exp.select(exp.Star()).from_(table_path(self.table))
        batches = self.engine.batches(read, "a Newton step's sums over the development rows", BATCH_ROWS)
        # one BLAS thread per batch: the products are 16 columns wide, and OpenBLAS's threads
        # spinning beside DuckDB's made a pass three times slower on a busy two-core machine
        # (scoremon bench); the cores are used by summing several batches at once instead
        with threadpool_limits(1, user_api="blas"):
            for part in _in_parallel(batches, lambda batch, scratch: self._batch(batch, betas, scratch, hessian, rough),
                                     self._spaces()):
                _add(total, part)
        return total

    def _spaces(self) -> list["_Scratch"]:
        """One scratch space per thread, kept for the whole fit: fresh buffers on every pass
        cost their pages' first touch each time, and the threads' page faults queue for the
        process's memory map (a pass was a third slower)."""
        while len(self._scratch) < self.threads:
            self._scratch.append(_Scratch(BATCH_ROWS, self.design.columns))
        return self._scratch[:self.threads]

    def _batch(self, batch: Mapping[str, np.ndarray], betas: Mapping[int, np.ndarray], scratch: "_Scratch",
               hessian: bool = True, rough: bool = False) -> dict[int, FoldSums]:
        """One batch's sums per model and fold (a fold model's own fold: loss, rows and extreme
        rows only, as its gradient and Hessian there are never read; no Hessian if not ``hessian``,
        in single precision if ``rough``: half the time of that product and its operand).

        Fold by fold, each fold's rows as one contiguous design block (:meth:`_Scratch.design`),
        for ``np.dot`` (see :class:`_Scratch`)."""
        p, k = self.design.columns, self.fold_count
        folds = np.asarray(batch[FOLD])
        n = len(folds)
        # the held rows are in fold order (codes_query), so a batch's folds are slices; a sort
        # is the fallback should an engine not keep the order
        order = None if k == 1 or bool(np.all(folds[1:] >= folds[:-1])) else np.argsort(folds, kind="stable")
        codes = [np.asarray(batch[bin_column(j)]) for j in range(1, p)]
        y = np.asarray(batch[Y], dtype=float)
        if order is not None:
            codes, y, folds = [c[order] for c in codes], y[order], folds[order]
        edges = np.searchsorted(folds, np.arange(k + 1)) if k > 1 else np.array([0, n])
        models = list(betas)
        coefficients = np.stack([betas[m] for m in models])
        sums = {m: FoldSums(np.zeros((k, p)), np.zeros((k, p, p)) if hessian else None, np.zeros(k), np.zeros(k),
                            np.zeros(k)) for m in models}
        for f in range(k):
            a, b = edges[f], edges[f + 1]
            if a == b:
                continue
            x = scratch.design(b - a)
            x[:, 0] = 1.0
            for j in range(1, p):
                # mode="clip" skips the per-element bounds check of the default mode (ten times
                # slower on small integers); every code is in range, as the CASE yields a bin's
                # position for every row (its ELSE is a bin)
                np.take(self.woe[j - 1], codes[j - 1][a:b], out=x[:, j], mode="clip")
            etas = np.dot(coefficients, x.T)  # one product for every model's η
            if hessian and rough:
                x_rough = scratch.design(b - a, np.float32)
                np.copyto(x_rough, x)
            for eta, m in zip(etas, models):
                s = sums[m]
                terms = scratch.terms(eta, y[a:b], loss_only=f == m)
                s.rows[f] = b - a
                s.extreme[f] = np.count_nonzero(terms.extreme)
                s.loss[f] = terms.loss()
                if f == m:
                    continue
                s.gradient[f] = np.dot(x.T, terms.residual)
                if hessian:
                    # Z = √w·x, so that ZᵀZ is one symmetric product (BLAS syrk, half the work of xᵀ(w·x))
                    if rough:
                        root = scratch.rough_root(b - a)
                        np.copyto(root, terms.root_weight)
                        z = np.multiply(x_rough, root[:, None], out=scratch.weighted(b - a, np.float32))
                    else:
                        z = np.multiply(x, terms.root_weight[:, None], out=scratch.weighted(b - a))
                    s.hessian[f] = np.dot(z.T, z)
        return sums


class _RowTerms:
    """Per row of a fold's rows in a batch, for one model's η: the residual μ − y,
    √w = √(μ(1 − μ)), whether |η| > :data:`~scoremon.develop.newton.EXTREME_ETA`, and the loss
    summed over the rows.

    All from one exponential, s = e^(−|η|/2), t = s² = e^(−|η|), r = 1/(1 + t):
    μ = r for η ≥ 0 and t·r below, w = t·r², √w = s·r, loss = max(η, 0) + ln(1 + t) − yη.
    Nothing overflows (s ≤ 1), and the logarithms are taken of products of
    :data:`LOG_CHUNK` factors 1 + t ∈ (1, 2] (each product < 2^512): one logarithm per chunk
    rather than per row, for a relative error below 10⁻¹³ per chunk.
    """

    def __init__(self, eta: np.ndarray, y: np.ndarray, space: "_Scratch", loss_only: bool = False):
        n = len(eta)
        self.eta, self.y = eta, y
        size = np.abs(eta, out=space.size[:n])
        self.extreme = np.greater(size, EXTREME_ETA, out=space.extreme[:n])
        if loss_only:  # a fold model's own fold: its loss and extreme rows are all that is read
            t = np.exp(np.negative(size, out=space.root[:n]), out=space.root[:n])
            self.one_plus_t = np.add(t, 1.0, out=t)
            return
        s = np.exp(np.multiply(size, -0.5, out=space.root[:n]), out=space.root[:n])
        t = np.multiply(s, s, out=space.size[:n])
        r = np.reciprocal(np.add(t, 1.0, out=space.reciprocal[:n]), out=space.reciprocal[:n])
        self.root_weight = np.multiply(s, r, out=space.root[:n])
        mu = np.multiply(t, r, out=space.residual[:n])
        np.copyto(mu, r, where=eta >= 0.0)
        self.residual = np.subtract(mu, y, out=mu)
        self.one_plus_t = np.add(t, 1.0, out=t)

    def loss(self) -> float:
        eta = self.eta
        return float(np.maximum(eta, 0.0).sum() - np.dot(self.y, eta) + _sum_of_logs(self.one_plus_t))


LOG_CHUNK = 512


def _sum_of_logs(values: np.ndarray) -> float:
    """Σ ln v over ``values`` in (1, 2] (see :class:`_RowTerms`)."""
    whole = len(values) - len(values) % LOG_CHUNK
    total = float(np.log(np.prod(values[:whole].reshape(-1, LOG_CHUNK), axis=1)).sum())
    return total + float(np.log(np.prod(values[whole:]))) if whole < len(values) else total


class _Scratch:
    """One worker's buffers for a batch, kept for the whole fit: a fold's float design and
    √w·design, and a model's row terms.

    A fold's design is a contiguous column-major block (each lookup writes one contiguous
    column), as its products go through ``np.dot``: numpy's ``@`` holds the GIL through its
    BLAS call, so two threads' products ran one after the other (measured: no gain from a
    second thread), while ``np.dot`` releases it but takes the BLAS route only for contiguous
    operands (a row slice of a larger column-major array was six times slower).
    """

    def __init__(self, rows: int, columns: int):
        self.rows, self.columns = rows, columns
        self._buffers: dict = {}
        self.size, self.root, self.reciprocal, self.residual = (np.empty(rows) for _ in range(4))
        self.extreme = np.empty(rows, dtype=bool)

    def design(self, rows: int, dtype=np.float64) -> np.ndarray:
        return self._matrix("design", rows, dtype)

    def weighted(self, rows: int, dtype=np.float64) -> np.ndarray:
        return self._matrix("weighted", rows, dtype)

    def rough_root(self, rows: int) -> np.ndarray:
        return self._buffer("root", self.rows, np.float32)[:rows]

    def _matrix(self, name: str, rows: int, dtype) -> np.ndarray:
        """A ``rows`` × columns column-major view of the buffer ``name``."""
        return self._buffer(name, self.rows * self.columns, dtype)[:rows * self.columns].reshape(self.columns, rows).T

    def _buffer(self, name: str, size: int, dtype) -> np.ndarray:
        key = (name, np.dtype(dtype))
        if key not in self._buffers:  # made on first use: the single-precision ones only for rough passes
            self._buffers[key] = np.empty(size, dtype=dtype)
        return self._buffers[key]

    def terms(self, eta: np.ndarray, y: np.ndarray, loss_only: bool = False) -> _RowTerms:
        return _RowTerms(eta, y, self, loss_only)


def _add(total: Mapping[int, FoldSums], part: Mapping[int, FoldSums]) -> None:
    for m, s in part.items():
        t = total[m]  # frozen, its arrays added to in place
        for mine, more in ((t.gradient, s.gradient), (t.hessian, s.hessian), (t.loss, s.loss), (t.rows, s.rows),
                           (t.extreme, s.extreme)):
            if mine is not None:
                mine += more


def _in_parallel(items: Iterator, work, spaces: Sequence) -> Iterator:
    """``work(item, space)`` for each item on one thread per scratch space in ``spaces``,
    yielding the results in the items' order (so that sums are added in the same order
    whatever the threads' timing, and a fit is the same run after run). At most one item per
    thread is in flight, so memory stays bounded by the batches, not the table; numpy releases
    the GIL in the lookups, the ufuncs and ``np.dot``, so the threads run at once."""
    if len(spaces) == 1:
        for item in items:
            yield work(item, spaces[0])
        return
    free: queue.SimpleQueue = queue.SimpleQueue()
    for space in spaces:
        free.put(space)

    def run(item):
        space = free.get()
        try:
            return work(item, space)
        finally:
            free.put(space)

    with ThreadPoolExecutor(len(spaces), thread_name_prefix="scoremon-fit") as pool:
        pending: deque = deque()
        for item in items:
            if len(pending) >= len(spaces):
                yield pending.popleft().result()
            pending.append(pool.submit(run, item))
        while pending:
            yield pending.popleft().result()


@contextmanager
def open_passes(engine, design: Design) -> Iterator[EnginePasses]:
    """The fit's passes for ``design`` on ``engine``: streamed where the engine streams batches,
    else aggregate queries; a held table is dropped on the way out."""
    if not engine.streams_batches:
        yield EnginePasses(engine, design)
        return
    passes = StreamedPasses(engine, design)
    try:
        yield passes
    finally:
        passes.close()
