"""The invented loan book of Quillfield Credit, written to a DuckDB file.

Quillfield Credit is a made-up consumer lender in a made-up country. It sells four products
(``personal``, ``car``, ``home_improvement``, ``debt_consolidation``) in five regions
(``north_fells``, ``river_cities``, ``south_coast``, ``east_plains``, ``islands``) through four
channels (``branch``, ``web``, ``mobile_app``, ``broker``). Every number is drawn from a fixed
seed, so the same ``rows`` and ``seed`` always give the same book.

Tables written:

``applications``  one row per application, 30 monthly cohorts from 2024-05 to 2026-10:
                  ``application_id`` (key), ``application_month`` (first day of the month),
                  4 categorical and 12 numeric characteristics, and the outcome ``bad_12m``
                  (1 = 90 or more days past due within 12 months). The scenario's "today" is
                  :data:`AS_OF`; a cohort's outcome is known only once its 12-month window has
                  closed by then, so the 11 youngest cohorts have NULL outcomes.
``development``   the 12 earliest cohorts (2024-05 to 2025-04), every row with an outcome:
                  the sample version 1 of the model was fitted on.

The outcome is drawn from a true logistic model over the characteristics (with bends that
WoE bins can follow), so a scorecard fitted to the development table fits the book.

Planted for monitoring to find (the constants below hold the dates):

* **Drift from 2025-07** (:data:`DRIFT_START`), gradual, month by month: revolving
  utilisation creeps up; nominal income inflates 0.6 % a month while real income (what drives
  risk) does not, so the model reads applicants as safer than they are; the broker channel
  grows from 12 % towards 30 % of applications at the expense of branches.
* **Economic stress from 2025-06** (:data:`STRESS_START`): the true log-odds of the event rise
  by 0.05 a month, up to 0.35, with no change in any characteristic. Mature cohorts from
  2025-06 to 2025-11 therefore show more events than the model predicts.
* **Data-quality incident, 2026-07** (:data:`MISSING_JOB_MONTH`): an employment-data feed
  outage leaves ``months_in_job`` NULL for about 70 % of that month's applications (4 %
  otherwise).
* **Data-quality incident, 2026-09** (:data:`UNSEEN_CHANNEL_MONTH`): a new partner feed sends
  channel code ``partner_api``, unseen in development, on about 18 % of that month's rows.

Other traits: ``revolving_utilisation`` is NULL for applicants without revolving credit
(about 6 %) and NaN on about 0.25 % of rows (the bureau divides by a zero limit);
``bureau_score`` is NULL for thin files (more often for the young); ``monthly_income``,
``debt_to_income``, ``months_at_address`` and ``housing`` are sometimes NULL.

Scale: rows are generated with numpy in fixed-size chunks and appended to DuckDB, so memory
stays flat from a few thousand rows to 50 million.
"""
from __future__ import annotations

import os
import uuid
from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import Callable

import duckdb
import numpy as np
import pandas as pd

from scoremon.errors import EngineError, InputError

LENDER = "Quillfield Credit"
SEED = 20_261_130
DEFAULT_ROWS = 400_000
MIN_ROWS = 3_000  # every monthly cohort needs rows, and the development months enough to fit
MAX_ROWS = 200_000_000
CHUNK_ROWS = 250_000  # part of the seed: changing it changes the book
ID_BASE = 70_000_000  # application ids are ID_BASE + 1, ID_BASE + 2, … in month order

FIRST_MONTH = date(2024, 5, 1)
MONTHS = 30  # 2024-05 … 2026-10
AS_OF = date(2026, 11, 30)  # the scenario's "today"
PERFORMANCE_WINDOW_MONTHS = 12
DEVELOPMENT_MONTHS = 12  # 2024-05 … 2025-04
DRIFT_START = date(2025, 7, 1)
STRESS_START = date(2025, 6, 1)
MISSING_JOB_MONTH = date(2026, 7, 1)
UNSEEN_CHANNEL_MONTH = date(2026, 9, 1)
UNSEEN_CHANNEL = "partner_api"

KEY_COLUMN = "application_id"
MONTH_COLUMN = "application_month"
OUTCOME_COLUMN = "bad_12m"
APPLICATIONS = "applications"
DEVELOPMENT = "development"

PRODUCTS = ("personal", "car", "home_improvement", "debt_consolidation")
PRODUCT_SHARES = (0.38, 0.24, 0.14, 0.24)
REGIONS = ("north_fells", "river_cities", "south_coast", "east_plains", "islands")
REGION_SHARES = (0.18, 0.34, 0.22, 0.17, 0.09)
CHANNELS = ("branch", "web", "mobile_app", "broker", UNSEEN_CHANNEL)
HOUSING = ("owner", "mortgage", "renting", "with_family")

# Seasonal weight of each calendar month (January first) for application volume.
SEASON = (0.92, 0.95, 1.05, 1.04, 1.03, 1.00, 0.98, 0.96, 1.02, 1.04, 1.03, 0.88)
VOLUME_GROWTH = 0.012  # a month

# The true model's log-odds effects. Not the fitted spec: the spec only sees the columns.
TRUE_INTERCEPT = -4.45
PRODUCT_EFFECT = {"personal": 0.0, "car": -0.45, "home_improvement": -0.25, "debt_consolidation": 0.35}
REGION_EFFECT = {"north_fells": 0.05, "river_cities": 0.0, "south_coast": -0.05, "east_plains": 0.10, "islands": -0.08}
CHANNEL_EFFECT = {"branch": -0.15, "web": 0.0, "mobile_app": 0.10, "broker": 0.55, UNSEEN_CHANNEL: 0.45}
HOUSING_EFFECT = {"owner": -0.35, "mortgage": -0.20, "renting": 0.15, "with_family": 0.10}
STRESS_STEP, STRESS_CAP = 0.05, 0.35
INCOME_INFLATION = 0.006  # a month, from DRIFT_START
UTILISATION_DRIFT = 0.045  # added to utilisation's log-odds a month, from DRIFT_START
BROKER_DRIFT = 0.012  # broker share gained a month from DRIFT_START (taken from branches)
BROKER_DRIFT_CAP = 0.18

# The planted facts in one line each, oldest first, for the demo's summary.
PLANTED = (
    (f"{STRESS_START:%Y-%m}", f"economic stress: true risk up {STRESS_STEP:g} log-odds a month (to {STRESS_CAP:g}); "
                              "no characteristic shows it"),
    (f"{DRIFT_START:%Y-%m}", "drift: utilisation creeps up, nominal income inflates "
                             f"{INCOME_INFLATION:.1%} a month, broker share grows from 12% towards 30%"),
    (f"{MISSING_JOB_MONTH:%Y-%m}", "months_in_job NULL on about 70% of rows (employment feed outage)"),
    (f"{UNSEEN_CHANNEL_MONTH:%Y-%m}", f"channel code {UNSEEN_CHANNEL}, unseen in development, on about 18% of rows"),
)

APPLICATIONS_DDL = """
CREATE TABLE applications (
    application_id BIGINT NOT NULL,
    application_month DATE NOT NULL,
    product VARCHAR,
    region VARCHAR,
    channel VARCHAR,
    housing VARCHAR,
    age INTEGER,
    monthly_income DOUBLE,
    debt_to_income DOUBLE,
    revolving_utilisation DOUBLE,
    months_at_address INTEGER,
    months_in_job INTEGER,
    enquiries_6m INTEGER,
    delinquencies_24m INTEGER,
    open_accounts INTEGER,
    loan_amount DOUBLE,
    term_months INTEGER,
    bureau_score INTEGER,
    bad_12m INTEGER
)
"""

# The chunk frame carries NaN as a separate flag: DuckDB reads NaN in a pandas float
# column as NULL, and this book needs both.
INSERT_CHUNK = """
INSERT INTO applications
SELECT application_id, CAST(application_month AS DATE), product, region, channel, housing, age,
       monthly_income, debt_to_income,
       CASE WHEN utilisation_is_nan THEN CAST('NaN' AS DOUBLE) ELSE revolving_utilisation END,
       months_at_address, months_in_job, enquiries_6m, delinquencies_24m, open_accounts,
       loan_amount, term_months, bureau_score, bad_12m
FROM chunk
"""

# No ORDER BY: DuckDB keeps insertion order (application id order) through a filtered scan,
# and sorting tens of millions of rows would cost memory for nothing.
COPY_DEVELOPMENT = """
CREATE TABLE development AS
SELECT * FROM applications WHERE application_month < ?
"""

Progress = Callable[[float], None]


def add_months(day: date, months: int) -> date:
    """The first day of the month ``months`` after ``day``'s month."""
    index = day.year * 12 + day.month - 1 + months
    return date(index // 12, index % 12 + 1, 1)


def month_starts() -> list[date]:
    """The first day of each cohort month, oldest first."""
    return [add_months(FIRST_MONTH, k) for k in range(MONTHS)]


def is_mature(month: date) -> bool:
    """Whether a cohort's performance window has closed by :data:`AS_OF`."""
    return add_months(month, PERFORMANCE_WINDOW_MONTHS) <= AS_OF


def development_end() -> date:
    """The first month after the development sample."""
    return add_months(FIRST_MONTH, DEVELOPMENT_MONTHS)


@dataclass(frozen=True)
class Book:
    """What :func:`build_warehouse` wrote: where, how many rows, which months."""

    database: Path
    rows: int
    development_rows: int
    months: tuple[date, ...]
    mature_months: tuple[date, ...]
    seed: int

    @property
    def immature_months(self) -> tuple[date, ...]:
        return tuple(m for m in self.months if m not in self.mature_months)


def monthly_volumes(rows: int) -> np.ndarray:
    """Applications per cohort month: growing, seasonal, summing exactly to ``rows``."""
    weights = np.array([(1 + VOLUME_GROWTH * k) * SEASON[m.month - 1] for k, m in enumerate(month_starts())])
    exact = rows * weights / weights.sum()
    counts = np.floor(exact).astype(np.int64)
    # largest remainders take the rows that flooring left over
    counts[np.argsort(-(exact - counts), kind="stable")[: rows - counts.sum()]] += 1
    return counts


def build_warehouse(database: str | Path, rows: int = DEFAULT_ROWS, seed: int = SEED,
                    progress: Progress | None = None) -> Book:
    """Write the book to a new DuckDB file at ``database``, replacing any file there.

    The file appears whole or not at all: it is built under a temporary name beside the
    target and renamed at the end. ``progress`` is called with the share done (0 to 1).
    Raises :class:`InputError` for a row count out of range or a folder that does not exist,
    and :class:`EngineError` if DuckDB fails (a full disk, say).

    >>> import tempfile, pathlib
    >>> book = build_warehouse(pathlib.Path(tempfile.mkdtemp()) / "book.duckdb", rows=5_000)
    >>> book.rows, len(book.months)
    (5000, 30)
    """
    if not MIN_ROWS <= rows <= MAX_ROWS:
        raise InputError(f"the demo book needs between {MIN_ROWS:,} and {MAX_ROWS:,} rows, not {rows:,}")
    database = Path(database)
    if not database.parent.is_dir():
        raise InputError(f"{database.parent}: no such folder; create it or choose another")
    partial = database.with_name(f".{database.name}.{uuid.uuid4().hex}.partial")
    month_ends = np.cumsum(monthly_volumes(rows))  # row k belongs to the first month whose end exceeds k
    try:
        try:
            connection = duckdb.connect(str(partial))
        except duckdb.Error as error:
            raise EngineError("creating the demo book", f"duckdb {partial}", str(error).splitlines()[0]) from error
        try:
            # DuckDB would draw its own progress bar on standard output, inside the demo's text
            connection.execute("SET enable_progress_bar_print = false")
            connection.execute(APPLICATIONS_DDL)
            for chunk_index, start in enumerate(range(0, rows, CHUNK_ROWS)):
                stop = min(start + CHUNK_ROWS, rows)
                months = np.searchsorted(month_ends, np.arange(start, stop), side="right")
                chunk = generate_chunk(seed, chunk_index, start, months)
                connection.register("chunk", chunk)
                connection.execute(INSERT_CHUNK)
                connection.unregister("chunk")
                if progress:
                    progress(0.9 * stop / rows)
            connection.execute(COPY_DEVELOPMENT, [development_end()])
            development_rows = connection.execute("SELECT count(*) FROM development").fetchone()[0]
            connection.execute("CHECKPOINT")
        except duckdb.Error as error:
            raise EngineError("building the demo book", f"duckdb {partial}", str(error).splitlines()[0]) from error
        finally:
            connection.close()
        stale_log = database.with_name(database.name + ".wal")
        if stale_log.exists():  # an old book's write-ahead log would be replayed onto the new file
            stale_log.unlink()
        os.replace(partial, database)
    finally:
        for leftover in (partial, partial.with_name(partial.name + ".wal")):
            if leftover.exists():
                leftover.unlink()
    if progress:
        progress(1.0)
    months = tuple(month_starts())
    return Book(database, rows, int(development_rows), months, tuple(m for m in months if is_mature(m)), seed)


# ---------------------------------------------------------------- one chunk of rows

def _pick(rng: np.random.Generator, shares: np.ndarray, rows: int) -> np.ndarray:
    """One choice per row, as an index; ``shares`` is one row for all or rows × choices."""
    cumulative = np.cumsum(np.atleast_2d(shares), axis=1)[:, :-1]
    return (rng.random(rows)[:, None] > cumulative).sum(axis=1)


def _sigmoid(x: np.ndarray) -> np.ndarray:
    return 1.0 / (1.0 + np.exp(-x))


def _month_index(month: date) -> int:
    return (month.year - FIRST_MONTH.year) * 12 + month.month - FIRST_MONTH.month


def _effects(effect: dict[str, float], labels: tuple[str, ...]) -> np.ndarray:
    return np.array([effect[label] for label in labels])


def _labels(labels: tuple[str, ...], index: np.ndarray, missing: np.ndarray | None = None) -> pd.Categorical:
    """A text column from choice indices (NULL where ``missing``); categorical keeps it cheap."""
    codes = index if missing is None else np.where(missing, -1, index)
    return pd.Categorical.from_codes(codes, categories=list(labels))


def _integers(values: np.ndarray, missing: np.ndarray | None = None) -> pd.arrays.IntegerArray:
    """A nullable INTEGER column (NULL where ``missing``)."""
    values = np.asarray(values, dtype=np.int32)
    mask = np.zeros(len(values), dtype=bool) if missing is None else missing
    return pd.arrays.IntegerArray(values, mask)


def _floats(values: np.ndarray, missing: np.ndarray) -> np.ndarray:
    """A DOUBLE column, NULL where ``missing`` (DuckDB reads a pandas NaN as NULL)."""
    return np.where(missing, np.nan, values)


def generate_chunk(seed: int, chunk_index: int, first_row: int, month_index: np.ndarray) -> pd.DataFrame:
    """Rows ``first_row`` … ``first_row + len(month_index) - 1`` of the book, one per application.

    ``month_index`` gives each row's cohort (0 = :data:`FIRST_MONTH`). The random stream is
    seeded by ``(seed, chunk_index)``, so a chunk is the same whatever else is generated.
    """
    n = len(month_index)
    rng = np.random.default_rng([seed, chunk_index])
    normal = rng.standard_normal
    drift = np.clip(month_index - _month_index(DRIFT_START) + 1, 0, None)  # 1 in the first drift month
    stress = np.minimum(STRESS_STEP * np.clip(month_index - _month_index(STRESS_START) + 1, 0, None), STRESS_CAP)

    # A latent financial strength ties the characteristics together, as in real books;
    # the outcome depends only on the characteristics, which the model can see.
    strength = normal(n)
    age = np.clip(np.round(41 + 4 * strength + 12 * normal(n)), 18, 80)
    young = age < 26

    product = _pick(rng, np.array(PRODUCT_SHARES), n)
    region = _pick(rng, np.array(REGION_SHARES), n)
    broker_gain = np.minimum(BROKER_DRIFT * drift, BROKER_DRIFT_CAP)
    channel_shares = np.column_stack([0.28 - broker_gain, np.full(n, 0.34), np.full(n, 0.26),
                                      0.12 + broker_gain, np.zeros(n)])
    new_feed = month_index == _month_index(UNSEEN_CHANNEL_MONTH)
    channel_shares[new_feed] *= 0.82
    channel_shares[new_feed, 4] = 0.18
    channel = _pick(rng, channel_shares, n)
    broker = channel == CHANNELS.index("broker")

    housing_weights = np.column_stack([
        np.clip(0.02 + 0.007 * (age - 25), 0.02, 0.40),
        np.clip(0.30 + 0.08 * strength, 0.05, 0.60),
        np.full(n, 0.35),
        np.where(young, 0.30, 0.04),
    ])
    housing = _pick(rng, housing_weights / housing_weights.sum(axis=1, keepdims=True), n)
    housing_missing = rng.random(n) < 0.015

    real_income = np.exp(7.95 + 0.30 * strength + 0.25 * np.tanh((age - 30) / 12) + 0.40 * normal(n))
    nominal_income = np.round(real_income * (1 + INCOME_INFLATION) ** drift, -1)
    income_missing = rng.random(n) < 0.025

    loan_median = np.array([7_000, 16_000, 12_000, 11_000])[product]
    loan_amount = np.clip(np.round(loan_median * np.exp(0.5 * normal(n) + 0.1 * strength), -2), 1_000, 60_000)
    term_shares = np.array([  # 12, 24, …, 84 months, one row per product
        (0.10, 0.25, 0.35, 0.20, 0.10, 0.0, 0.0),
        (0.0, 0.05, 0.20, 0.30, 0.30, 0.15, 0.0),
        (0.0, 0.10, 0.25, 0.20, 0.25, 0.10, 0.10),
        (0.0, 0.0, 0.40, 0.30, 0.30, 0.0, 0.0),
    ])
    term_months = 12 * (1 + _pick(rng, term_shares[product], n))
    monthly_rate = 0.095 / 12
    payment = loan_amount * monthly_rate / (1 - (1 + monthly_rate) ** -term_months)
    other_debt_share = np.clip(0.17 - 0.06 * strength + 0.08 * normal(n), 0.0, 0.9)
    debt_to_income = np.round(other_debt_share + payment / nominal_income, 3)

    utilisation = np.round(1.15 * _sigmoid(-0.5 - 0.95 * strength + 0.7 * normal(n) + UTILISATION_DRIFT * drift), 3)
    no_revolving = rng.random(n) < np.where(young, 0.12, 0.04)
    utilisation_is_nan = ~no_revolving & (rng.random(n) < 0.0025)

    most_months = 12 * (age - 16)
    months_at_address = np.clip(np.round(12 * (1 + 0.25 * (age - 18)) * np.exp(0.8 * normal(n) - 0.32)), 0, most_months)
    address_missing = rng.random(n) < 0.03
    months_in_job = np.clip(np.round(12 * (0.8 + 0.18 * (age - 18)) * np.exp(0.9 * normal(n) - 0.4 + 0.15 * strength)),
                            0, most_months)
    feed_outage = month_index == _month_index(MISSING_JOB_MONTH)
    job_missing = rng.random(n) < np.where(feed_outage, 0.70, 0.04)

    enquiries_6m = rng.poisson(np.exp(0.25 - 0.45 * strength + 0.3 * broker))
    delinquencies_24m = rng.poisson(np.exp(-1.8 - 1.0 * strength))
    open_accounts = rng.poisson(np.exp(1.25 + 0.15 * strength + 0.008 * (age - 40)))
    bureau_score = np.clip(np.round(640 + 70 * strength + 30 * normal(n)), 300, 900)
    thin_file = rng.random(n) < np.where(young, 0.13, 0.03)

    # The true log-odds of the event. The truth knows real income and the real job tenure
    # even where the application lost them; stress moves risk with no visible cause.
    utilisation_missing = no_revolving | utilisation_is_nan
    recorded_dti = np.minimum(debt_to_income, 2.0)
    eta = (
        TRUE_INTERCEPT + stress
        + np.where(thin_file, 0.5, -0.009 * (bureau_score - 640))
        + np.where(utilisation_missing, 0.15, 2.2 * np.maximum(utilisation - 0.6, 0) + 0.6 * utilisation)
        + np.where(income_missing, 0.3, 1.5 * np.maximum(recorded_dti - 0.4, 0) + 0.9 * recorded_dti)
        + 0.16 * np.minimum(enquiries_6m, 8) + 0.30 * np.minimum(delinquencies_24m, 5)
        - 0.25 * np.log(real_income / 3_000)
        - 0.0035 * np.minimum(months_in_job, 120)
        + np.where(address_missing, 0.10, -0.0025 * np.minimum(months_at_address, 180))
        + _effects(PRODUCT_EFFECT, PRODUCTS)[product]
        + _effects(REGION_EFFECT, REGIONS)[region]
        + _effects(CHANNEL_EFFECT, CHANNELS)[channel]
        + np.where(housing_missing, 0.10, _effects(HOUSING_EFFECT, HOUSING)[housing])
        + 0.005 * (term_months - 36) + 0.06 * np.log(loan_amount / 10_000) - 0.006 * (age - 40)
    )
    event = rng.random(n) < _sigmoid(eta)
    immature = ~np.array([is_mature(m) for m in month_starts()])[month_index]

    return pd.DataFrame({
        "application_id": np.arange(first_row + 1, first_row + n + 1, dtype=np.int64) + ID_BASE,
        "application_month": np.array(month_starts(), dtype="datetime64[D]")[month_index],
        "product": _labels(PRODUCTS, product),
        "region": _labels(REGIONS, region),
        "channel": _labels(CHANNELS, channel),
        "housing": _labels(HOUSING, housing, housing_missing),
        "age": _integers(age),
        "monthly_income": _floats(nominal_income, income_missing),
        "debt_to_income": _floats(debt_to_income, income_missing),
        "revolving_utilisation": _floats(utilisation, no_revolving),
        "utilisation_is_nan": utilisation_is_nan,
        "months_at_address": _integers(months_at_address, address_missing),
        "months_in_job": _integers(months_in_job, job_missing),
        "enquiries_6m": _integers(enquiries_6m),
        "delinquencies_24m": _integers(delinquencies_24m),
        "open_accounts": _integers(open_accounts),
        "loan_amount": loan_amount,
        "term_months": _integers(term_months),
        "bureau_score": _integers(bureau_score, thin_file),
        "bad_12m": _integers(event, immature),
    })
