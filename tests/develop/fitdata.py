"""A small synthetic development table for fitting tests, with its WoE design built in numpy
(independently of the compiler's binning CASE)."""
from __future__ import annotations

import math

import numpy as np
from sqlglot import exp

from scoremon.spec.model import CategoricalFeature, NumericFeature

EDGES = {"income": [20.0, 35.0, 50.0], "utilisation": [0.3, 0.6]}
GROUPS = {"housing": [("owner", ["own", "mortgage"]), ("renting", ["rent"])]}


def table(rows: int = 3000, seed: int = 11, separate: bool = False):
    """Columns id, income (NULL and NaN among them), utilisation, housing (text, NULL), bad."""
    rng = np.random.default_rng(seed)
    income = np.round(rng.gamma(4.0, 10.0, rows), 1)
    utilisation = np.round(rng.random(rows), 3)
    housing = rng.choice(["own", "mortgage", "rent", "family"], rows, p=[0.3, 0.3, 0.3, 0.1]).astype(object)
    eta = -1.5 - 0.03 * (income - 40) + 1.2 * utilisation + np.where(housing == "rent", 0.5, 0.0)
    bad = (rng.random(rows) < 1 / (1 + np.exp(-eta))).astype(int)
    if separate:
        bad = (utilisation > 0.6).astype(int)
    income = income.astype(object)
    income[rng.random(rows) < 0.05] = None
    income[rng.random(rows) < 0.02] = float("nan")
    housing[rng.random(rows) < 0.03] = None
    return [(i, income[i], float(utilisation[i]), housing[i], int(bad[i])) for i in range(rows)]


COLUMNS = [("id", "BIGINT"), ("income", "DOUBLE"), ("utilisation", "DOUBLE"), ("housing", "VARCHAR"), ("bad", "BIGINT")]


def bin_index(rows):
    """Bin numbers per feature in feature_terms order (intervals, [catch-all,] missing), numpy."""
    income = np.array([np.nan if r[1] is None else r[1] for r in rows], dtype=float)
    missing_income = np.array([r[1] is None or math.isnan(r[1]) for r in rows])
    b_income = np.where(missing_income, 4, np.searchsorted(EDGES["income"], np.nan_to_num(income), side="right"))
    util = np.array([r[2] for r in rows])
    b_util = np.searchsorted(EDGES["utilisation"], util, side="right")
    labels = sorted(GROUPS["housing"])  # groups by label, then other, then missing
    def housing_bin(v):
        if v is None:
            return len(labels) + 1
        for i, (_, values) in enumerate(labels):
            if v in values:
                return i
        return len(labels)
    b_housing = np.array([housing_bin(r[3]) for r in rows])
    return {"income": b_income, "utilisation": b_util, "housing": b_housing}


def woe_table(bins: np.ndarray, y: np.ndarray, count: int) -> list[float]:
    """ln(%non-events / %events) per bin with half a count added to each side."""
    events = np.bincount(bins, weights=y, minlength=count) + 0.5
    non_events = np.bincount(bins, weights=1 - y, minlength=count) + 0.5
    return list(np.log((non_events / non_events.sum()) / (events / events.sum())))


def features(rows):
    """Spec features with the numpy WoE of ``rows``; and the dense design (intercept first)."""
    y = np.array([r[4] for r in rows], dtype=float)
    idx = bin_index(rows)
    woe = {"income": woe_table(idx["income"], y, 5), "utilisation": woe_table(idx["utilisation"], y, 4),
           "housing": woe_table(idx["housing"], y, 4)}
    def numeric(name):
        edges = [-math.inf] + EDGES[name] + [math.inf]
        return NumericFeature(name=name, type="numeric", bins=[
            {"lower": edges[i], "upper": edges[i + 1], "woe": woe[name][i]} for i in range(len(edges) - 1)],
            missing={"woe": woe[name][len(edges) - 1]})
    labels = sorted(GROUPS["housing"])
    housing = CategoricalFeature(name="housing", type="categorical", groups=[
        {"label": label, "values": values, "woe": woe["housing"][i]} for i, (label, values) in enumerate(labels)],
        other={"label": "other", "woe": woe["housing"][2]}, missing={"woe": woe["housing"][3]})
    feats = (numeric("income"), numeric("utilisation"), housing)
    x = np.column_stack([np.ones(len(y))] + [np.asarray(woe[f.name])[idx[f.name]] for f in feats])
    return feats, x, y


def source(name: str = "dev") -> exp.Table:
    return exp.to_table(exp.to_identifier(name, quoted=True))


def numpy_woe(feature, values) -> np.ndarray:
    """The WoE of each value under a spec ``feature``, in numpy and plain Python (an independent
    binner for reference designs: default routes only — NaN and NULL to missing, ±inf to the
    outer bins)."""
    out = np.empty(len(values))
    if feature.type == "numeric":
        bins = sorted(feature.bins, key=lambda b: b.lower)
        uppers = np.array([b.upper for b in bins[:-1]])
        woes = np.array([b.woe for b in bins])
        side = "right" if feature.closed == "lower" else "left"
        for i, v in enumerate(values):
            if v is None or (isinstance(v, float) and math.isnan(v)):
                out[i] = feature.missing.woe
            else:
                out[i] = woes[np.searchsorted(uppers, v, side=side)]
        return out
    lookup = {value: g.woe for g in feature.groups for value in g.values}
    lookup.update({value: feature.other.woe for value in feature.other.values})
    for i, v in enumerate(values):
        out[i] = feature.missing.woe if v is None else lookup.get(v, feature.other.woe)
    return out
