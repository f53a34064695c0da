"""A small invented book for the monitoring tests: a few months of applications for
``tests/monitor/spec.yaml``, with outcomes drawn from the model's own PD (computed by the
independent reference scorer), so the model is calibrated on it unless a test shifts it.

Invented data: the tests check monitoring figures against references computed from the same
rows (scipy, scikit-learn, pandas), never against numbers taken from this data.
"""
from __future__ import annotations

from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd

from scoremon.spec import load_spec
from tests.reference_scorer import score_frame

SPEC_PATH = Path(__file__).with_name("spec.yaml")
FIRST = date(2024, 1, 1)


def month_start(k: int) -> date:
    return date(FIRST.year + (FIRST.month - 1 + k) // 12, (FIRST.month - 1 + k) % 12 + 1, 1)


def make_book(months: int = 12, rows_per_month: int = 300, seed: int = 11, age_shift: float = 0.0,
              risk_shift: float = 0.0, shifted_from: int | None = None) -> pd.DataFrame:
    """Rows for ``months`` months; from month ``shifted_from`` on, applicants are ``age_shift``
    years younger and their true log-odds ``risk_shift`` higher than the model's."""
    rng = np.random.default_rng(seed)
    frames = []
    for k in range(months):
        n = rows_per_month
        shifted = shifted_from is not None and k >= shifted_from
        age = rng.normal(38 - (age_shift if shifted else 0.0), 11, n).round()
        age_values = [None if rng.random() < 0.03 else float(a) for a in age]
        region = rng.choice(["N1", "N2", "S1", "W1", "Z9"], n, p=[0.35, 0.25, 0.3, 0.06, 0.04]).astype(object)
        region[rng.random(n) < 0.02] = None
        utilisation = [None if rng.random() < 0.04 else float(u) for u in rng.uniform(0, 1.4, n)]
        frames.append(pd.DataFrame({
            "application_month": [month_start(k)] * n,
            "age": pd.Series(age_values, dtype=object),
            "region_code": region,
            "utilisation": pd.Series(utilisation, dtype=object),
            "shifted": shifted,
        }))
    book = pd.concat(frames, ignore_index=True)
    spec = load_spec(SPEC_PATH)
    reference = score_frame(spec, book[["age", "region_code", "utilisation"]])
    eta = np.log(reference["pd"].astype(float) / (1 - reference["pd"].astype(float)))
    true_pd = 1 / (1 + np.exp(-(eta + np.where(book["shifted"], risk_shift, 0.0))))
    book["bad"] = (rng.random(len(book)) < true_pd).astype(int)
    return book.drop(columns=["shifted"])


COLUMNS = [("application_month", "DATE"), ("age", "DOUBLE"), ("region_code", "VARCHAR"),
           ("utilisation", "DOUBLE"), ("bad", "BIGINT")]


def load_book(engine, table: str, book: pd.DataFrame) -> None:
    """Write ``book`` into ``table`` of any engine (NULL stays NULL)."""
    rows = [tuple(None if (v is None or (isinstance(v, float) and np.isnan(v))) else
                  (int(v) if isinstance(v, (np.integer,)) else v) for v in row)
            for row in book[[name for name, _ in COLUMNS]].itertuples(index=False, name=None)]
    engine.write_rows([table], COLUMNS, rows, f"loading the test table {table}")
