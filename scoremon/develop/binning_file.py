"""The binning file: what `scoremon bin` writes, a modeller edits and `scoremon fit` reads.

A YAML file with a ``binning:`` header (table, engine, outcome, key, month column and months,
rows, events, settings, scoremon's version) and a ``features:`` list. Each feature is written
in the spec's own feature syntax (:mod:`scoremon.spec.model`), every bin carrying its ``woe``,
plus statistics keys: ``iv`` on the feature, and ``rows``, ``events``, ``event_rate``, ``iv``
on every bin (``bins`` or ``groups``, ``other``, ``missing``). With the statistics keys removed
and a ``coefficient`` added, a feature is a valid spec feature.

:func:`read_binning` returns a typed, frozen :class:`Binning` or raises
:class:`~scoremon.errors.SpecError` with every problem at file:line:column (the spec's own
located YAML loading and validation do the work). :func:`write_binning` writes a file whole
or not at all (a temporary file beside it, then ``os.replace``), and never replaces an
existing file unless told to.
"""
from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field
from importlib import metadata
from pathlib import Path
from typing import Any, Union

import yaml

from ..errors import InputError, Problem, SpecError
from ..files import check_output, write_text
from ..spec.loading import validate_source
from ..spec.model import CategoricalFeature, NumericFeature
from ..spec.source import SpecSource, read_spec_file, read_spec_text
from .settings import Settings
from .woe import bin_evidence, event_rate

STATISTICS = ("rows", "events", "event_rate", "iv")  # woe is statistic and spec value at once
DECIMALS = 6  # woe, iv and event rates are written rounded to this many decimals
BinnedSpecFeature = Union[NumericFeature, CategoricalFeature]


def scoremon_version() -> str:
    try:
        return metadata.version("scoremon")
    except metadata.PackageNotFoundError:  # running from a source tree that was never installed
        return "unknown"


@dataclass(frozen=True)
class BinCount:
    """The statistics of one bin, as counted on the table."""

    label: str
    rows: int
    events: int
    event_rate: float | None
    woe: float
    iv: float


@dataclass(frozen=True)
class BinnedFeature:
    """One characteristic: its spec feature (WoE on every bin, no coefficient) and its counts.

    ``counts`` follows the feature's bins: numeric ``bins…, missing``; categorical
    ``groups…, other, missing``.
    """

    feature: BinnedSpecFeature
    iv: float
    counts: tuple[BinCount, ...]

    @property
    def name(self) -> str:
        return self.feature.name

    @property
    def inner_counts(self) -> tuple[BinCount, ...]:
        """The counts of the bins or groups alone (without the catch-all and missing bins)."""
        inner = self.feature.bins if isinstance(self.feature, NumericFeature) else self.feature.groups
        return self.counts[:len(inner)]

    def spec_feature(self, coefficient: float) -> BinnedSpecFeature:
        """The spec feature with its fitted ``coefficient`` (times each bin's WoE)."""
        return self.feature.model_copy(update={"coefficient": float(coefficient)})


@dataclass(frozen=True)
class Binning:
    """A binning file's content."""

    table: str
    engine: str
    outcome: str
    rows: int
    events: int
    settings: Settings
    features: tuple[BinnedFeature, ...]
    key: str | None = None
    month_column: str | None = None
    months: tuple[str, str] | None = None  # first and last month, as text
    scoremon_version: str = field(default_factory=scoremon_version)
    file: str | None = None  # where it was read from

    def feature(self, name: str) -> BinnedFeature:
        for binned in self.features:
            if binned.name == name:
                return binned
        raise KeyError(name)

    @property
    def fingerprint(self) -> str:
        """16 hex digits of the SHA-256 of the content (not the text): header, bins and counts."""
        data = {"header": [self.table, self.engine, self.outcome, self.key, self.month_column,
                           list(self.months) if self.months else None, self.rows, self.events],
                "features": [{"feature": b.feature.model_dump(mode="json"), "iv": b.iv,
                              "counts": [[c.label, c.rows, c.events, c.woe, c.iv] for c in b.counts]}
                             for b in self.features]}
        text = json.dumps(data, sort_keys=True, separators=(",", ":"), allow_nan=True)
        return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]


# ---------------------------------------------------------------- counts → features

def with_counts(feature: BinnedSpecFeature, rows_events: list[tuple[int, int]], total_rows: int,
                total_events: int) -> BinnedFeature:
    """A :class:`BinnedFeature` whose WoE and IV follow from ``rows_events``, given per bin in
    the order of :class:`BinnedFeature` ``counts`` (the feature's WoE values are replaced)."""
    evidence = [bin_evidence(r, e, total_rows, total_events) for r, e in rows_events]
    woes = [round(ev.woe, DECIMALS) + 0.0 for ev in evidence]
    labels = bin_labels(feature)
    counts = tuple(BinCount(label, r, e, _rounded(event_rate(r, e)), w, round(ev.iv, DECIMALS) + 0.0)
                   for label, (r, e), w, ev in zip(labels, rows_events, woes, evidence, strict=True))
    if isinstance(feature, NumericFeature):
        bins = [b.model_copy(update={"woe": w}) for b, w in zip(feature.bins, woes)]
        update = {"bins": bins, "missing": feature.missing.model_copy(update={"woe": woes[-1]})}
    else:
        n = len(feature.groups)
        groups = [g.model_copy(update={"woe": w}) for g, w in zip(feature.groups, woes)]
        update = {"groups": groups, "other": feature.other.model_copy(update={"woe": woes[n]}),
                  "missing": feature.missing.model_copy(update={"woe": woes[n + 1]})}
    iv = round(math.fsum(ev.iv for ev in evidence), DECIMALS) + 0.0
    return BinnedFeature(feature.model_copy(update=update), iv, counts)


def bin_labels(feature: BinnedSpecFeature) -> list[str]:
    """Each bin's label in the order of :class:`BinnedFeature` ``counts``."""
    if isinstance(feature, NumericFeature):
        return [feature.bin_label(b) for b in feature.bins] + [feature.missing.label]
    return [g.label for g in feature.groups] + [feature.other.label, feature.missing.label]


def _rounded(value: float | None) -> float | None:
    return None if value is None else round(value, DECIMALS) + 0.0


# ---------------------------------------------------------------- writing

HEADER_COMMENT = """\
# scoremon binning file: the coarse classes of each characteristic of a development table,
# in the spec's own bin syntax, with what was counted in every bin.
#
# Edit it by hand: merge two bins (delete one, and stretch the other's edge over it), round
# an edge, move a category from one group to another (or into other's values), rename a
# label. Then recount the bins exactly as written (nothing is re-binned):
#   scoremon bin --recount THIS_FILE --db URL --out NEW_FILE
# rows, events, event_rate, woe and iv are all recounted, so stale numbers do no harm.
# WoE = ln(%non-events / %events): higher is lower risk. A bin with no events or no
# non-events gets 0.5 added to both its counts; an empty bin gets WoE 0.
# Numeric bins: NaN counts with the missing bin, +inf with the top bin, -inf with the bottom.
"""


def binning_text(binning: Binning) -> str:
    """The YAML text of a binning file."""
    lines = [HEADER_COMMENT.rstrip("\n"), "binning:"]
    header: dict[str, Any] = {"table": binning.table, "engine": binning.engine, "outcome": binning.outcome}
    if binning.key is not None:
        header["key"] = binning.key
    if binning.month_column is not None:
        header["month_column"] = binning.month_column
    if binning.months is not None:
        header["months"] = list(binning.months)
    header.update({"rows": binning.rows, "events": binning.events})
    for key, value in header.items():
        lines.append(f"  {key}: {_flow(value)}")
    s = binning.settings
    lines.append("  settings: " + _flow({"fine_classes": s.fine_classes, "min_share": s.min_share,
                                         "min_events": s.min_events, "trend": s.trend, "max_bins": s.max_bins}))
    lines.append(f"  scoremon_version: {_flow(binning.scoremon_version)}")
    lines.append("features:")
    for binned in binning.features:
        lines += _feature_lines(binned)
    return "\n".join(lines) + "\n"


def _feature_lines(binned: BinnedFeature) -> list[str]:
    f = binned.feature
    lines = [f"  - name: {_flow(f.name)}"]
    if f.column is not None:
        lines.append(f"    column: {_flow(f.column)}")
    lines.append(f"    type: {f.type}")
    if f.description:
        lines.append(f"    description: {_flow(f.description)}")
    counts = list(binned.counts)
    if isinstance(f, NumericFeature):
        lines.append(f"    closed: {f.closed}")
        lines.append(f"    iv: {_flow(binned.iv)}")
        lines.append("    bins:")
        for b, c in zip(f.bins, counts):
            item = {"lower": _edge(b.lower), "upper": _edge(b.upper)}
            if b.label is not None:
                item["label"] = b.label
            lines.append("      - " + _flow({**item, **_statistics(c)}))
        lines.append("    missing: " + _flow(_labelled(f.missing.label, counts[-1])))
        for key in ("nan", "positive_infinity", "negative_infinity"):
            if getattr(f, key) is not None:
                lines.append(f"    {key}: {_flow(getattr(f, key))}")
    else:
        lines.append(f"    iv: {_flow(binned.iv)}")
        lines.append("    groups:")
        for g, c in zip(f.groups, counts):
            lines.append("      - " + _flow({"label": g.label, "values": list(g.values), **_statistics(c)}))
        other = _labelled(f.other.label, counts[-2])
        if f.other.values:
            other = {"label": f.other.label, "values": list(f.other.values), **_statistics(counts[-2])}
        lines.append("    other: " + _flow(other))
        lines.append("    missing: " + _flow(_labelled(f.missing.label, counts[-1])))
    return lines


def _labelled(label: str, count: BinCount) -> dict:
    return {"label": label, **_statistics(count)}


def _statistics(count: BinCount) -> dict:
    return {"rows": count.rows, "events": count.events, "event_rate": count.event_rate, "woe": count.woe,
            "iv": count.iv}


def _edge(value: float):
    """An edge as a person writes it: 540 rather than 540.0 (the spec reads both the same)."""
    if math.isfinite(value) and float(value).is_integer() and abs(value) < 1e15:
        return int(value)
    return float(value)


def _flow(value: Any) -> str:
    """One YAML value on one line (mappings and lists in flow style), quoted where YAML needs it."""
    text = yaml.safe_dump([value], default_flow_style=True, sort_keys=False, width=1_000_000_000,
                          allow_unicode=True).strip()
    return text[1:-1]


def write_binning(binning: Binning, path: str | Path, replace: bool = False) -> Path:
    """Write ``binning`` to ``path``, whole or not at all (:func:`scoremon.files.write_text`).

    Raises :class:`InputError` when ``path`` exists and ``replace`` is false, or its folder
    does not exist. The text is read back through :func:`read_binning`'s checks first, so a
    file that would not load is never written.
    """
    path = check_output(path, "--out", replace)
    text = binning_text(binning)
    read_binning_text(text, str(path))  # a bug, never the user's input, if this raises
    return write_text(path, text)


# ---------------------------------------------------------------- reading

def read_binning(path: str | Path, counted: bool = True) -> Binning:
    """Read and check a binning file.

    With ``counted`` (what `fit` needs) every bin must carry its rows, events and WoE, and the
    WoE must follow from the counts; without it (a hand-edited file about to be recounted) the
    statistics may be missing or stale. Raises :class:`SpecError` listing every problem at
    file:line:column.

    >>> binning = read_binning("tests/fixtures/binning.yaml")
    >>> [b.name for b in binning.features]
    ['bureau_score', 'housing']
    """
    return _read(read_spec_file(path), counted)


def read_binning_text(text: str, file: str = "<binning>", counted: bool = True) -> Binning:
    """:func:`read_binning` for text in hand."""
    return _read(read_spec_text(text, file), counted)


_HEADER_TEXT = ("table", "engine", "outcome")
_HEADER_OPTIONAL = ("key", "month_column")
_HEADER_KEYS = _HEADER_TEXT + _HEADER_OPTIONAL + ("months", "rows", "events", "settings", "scoremon_version")


def _read(source: SpecSource, counted: bool) -> Binning:
    data = source.data
    problems: list[Problem] = list(source.problems)
    if not isinstance(data, dict) or "binning" not in data or "features" not in data:
        raise SpecError(problems + [source.problem((), "a binning file starts with `binning:` (the header) and "
                                                       "holds `features:`; write one with scoremon bin")])
    for key in data:
        if key not in ("binning", "features"):
            problems.append(source.problem((key,), f"unknown key {key!r}; a binning file holds binning and features"))
    header, settings = _read_header(data["binning"], source, problems)
    features = data["features"]
    spec_features: list[Any] = []
    statistics: list[dict] = []
    if not isinstance(features, list) or not features:
        problems.append(source.problem(("features",), "features must be a list of at least one characteristic"))
        features = []
    for i, feature in enumerate(features):
        stripped, stats = _strip(feature, ("features", i), source, problems, counted)
        spec_features.append(stripped)
        statistics.append(stats)
    validated = []
    if features:
        try:
            validated = list(validate_source(_as_spec(source, spec_features)).features)
        except SpecError as error:
            problems += error.problems
    binned: list[BinnedFeature] = []
    if not problems:
        for i, (feature, stats) in enumerate(zip(validated, statistics)):
            feature = feature.model_copy(update={"coefficient": None})
            binned.append(_binned(feature, stats, ("features", i), header, source, problems, counted))
    if problems:
        raise SpecError(problems)
    months = tuple(str(m) for m in header["months"]) if header.get("months") else None
    return Binning(table=header["table"], engine=header["engine"], outcome=header["outcome"], rows=header["rows"],
                   events=header["events"], settings=settings, features=tuple(binned), key=header.get("key"),
                   month_column=header.get("month_column"), months=months,
                   scoremon_version=str(header.get("scoremon_version", "unknown")), file=source.file)


def _read_header(header: Any, source: SpecSource, problems: list[Problem]) -> tuple[dict, Settings]:
    path = ("binning",)
    if not isinstance(header, dict):
        problems.append(source.problem(path, "binning must be a mapping (table, engine, outcome, rows, events, …)"))
        return {"table": "", "engine": "", "outcome": "", "rows": 0, "events": 0}, Settings()
    result = dict(header)
    for key in header:
        if key not in _HEADER_KEYS:
            problems.append(source.problem(path + (key,), f"unknown key {key!r}; the header holds "
                                                          f"{', '.join(_HEADER_KEYS)}"))
    for key in _HEADER_TEXT + _HEADER_OPTIONAL:
        value = header.get(key)
        if key in _HEADER_OPTIONAL and value is None:
            continue
        if not isinstance(value, str) or not value:
            problems.append(source.problem(path + (key,), f"{key} must be text (the name as given to scoremon bin)"))
            result[key] = ""
    for key in ("rows", "events"):
        value = header.get(key)
        if not _is_count(value):
            problems.append(source.problem(path + (key,), f"{key} must be a whole number of 0 or more"))
            result[key] = 0
    if _is_count(header.get("rows")) and _is_count(header.get("events")) and header["events"] > header["rows"]:
        problems.append(source.problem(path + ("events",), "events exceed rows"))
    months = header.get("months")
    if months is not None and not (isinstance(months, list) and len(months) == 2):
        problems.append(source.problem(path + ("months",), "months must be [first, last]"))
        result["months"] = None
    raw = header.get("settings", {})
    settings = Settings()
    if not isinstance(raw, dict):
        problems.append(source.problem(path + ("settings",), "settings must be a mapping"))
    else:
        known = {"fine_classes", "min_share", "min_events", "trend", "max_bins"}
        for key in raw:
            if key not in known:
                problems.append(source.problem(path + ("settings", key), f"unknown setting {key!r}; known: "
                                                                         f"{', '.join(sorted(known))}"))
        try:
            settings = Settings(**{k: v for k, v in raw.items() if k in known})
        except (InputError, TypeError) as error:
            problems.append(source.problem(path + ("settings",), str(error)))
    return result, settings


def _is_count(value: Any) -> bool:
    return isinstance(value, int) and not isinstance(value, bool) and value >= 0


def _places(feature: dict) -> list[tuple]:
    """The sub-paths of a feature's bins, in counts order."""
    places: list[tuple] = []
    for key in ("bins", "groups"):
        if isinstance(feature.get(key), list):
            places += [(key, j) for j in range(len(feature[key]))]
    if feature.get("type") == "categorical":
        places.append(("other",))
    places.append(("missing",))
    return places


def _strip(feature: Any, path: tuple, source: SpecSource, problems: list[Problem], counted: bool):
    """The feature without its statistics keys, and the statistics by bin place."""
    if not isinstance(feature, dict):
        return feature, {}
    feature = dict(feature)
    stats: dict = {"iv": feature.pop("iv", None)}
    if feature.get("type") == "linear":
        problems.append(source.problem(path + ("type",), "a binning file holds numeric and categorical "
                                                         "characteristics only; use numeric"))
    if "coefficient" in feature:
        problems.append(source.problem(path + ("coefficient",), "a binning file holds no coefficient (scoremon "
                                                                "fit writes it into the spec); remove it"))
    feature["coefficient"] = 1.0  # validated as a spec feature, then dropped again
    for place in _places(feature):
        container = feature[place[0]]
        item = container[place[1]] if len(place) == 2 else container
        if not isinstance(item, dict):
            if item is None and place in (("other",), ("missing",)):
                container = {}
                feature[place[0]] = container
                item = container
            else:
                continue
        item = dict(item)
        stats[place] = {key: item.pop(key) for key in STATISTICS if key in item}
        if "woe" in item:
            stats[place]["woe"] = item["woe"]
        elif not counted and not any(k in item for k in ("log_odds", "points")):
            item["woe"] = 0.0  # recounted anyway
        if len(place) == 2:
            feature[place[0]] = list(feature[place[0]])
            feature[place[0]][place[1]] = item
        else:
            feature[place[0]] = item
    return feature, stats


def _as_spec(source: SpecSource, features: list) -> SpecSource:
    """The features inside a minimal spec, located through the binning file's marks (the
    features sit at the same paths in both), so the spec's own checks report file:line."""
    data = {"model": {"name": "binning", "version": "1", "owner": "scoremon bin", "effective_date": "2000-01-01",
                      "intended_use": "binning", "event": "outcome", "performance_window_months": 1},
            "intercept": 0.0, "scaling": {"base_score": 600.0, "base_odds": 50.0, "pdo": 20.0},
            "features": features, "grades": [{"name": "all", "lower": -math.inf, "upper": math.inf}]}
    return SpecSource(data=data, file=source.file, key_marks=source.key_marks, value_marks=source.value_marks,
                      texts=source.texts)


def _binned(feature: BinnedSpecFeature, stats: dict, path: tuple, header: dict, source: SpecSource,
            problems: list[Problem], counted: bool) -> BinnedFeature:
    raw = {"type": feature.type, "bins": feature.bins} if isinstance(feature, NumericFeature) else \
        {"type": feature.type, "groups": feature.groups}
    places = _places(raw)
    labels = bin_labels(feature)
    woes = _woes(feature)
    counts = []
    known = len(problems)
    for place, label, woe in zip(places, labels, woes):
        item = stats.get(place, {})
        rows, events = item.get("rows"), item.get("events")
        if not (_is_count(rows) and _is_count(events) and events <= rows):
            if counted:
                problems.append(source.problem(path + place, "rows and events must be whole numbers, events at most "
                                                             "rows; recount the file with scoremon bin --recount"))
            counts.append(BinCount(label, 0, 0, None, woe, 0.0))
            continue
        iv = item.get("iv")
        counts.append(BinCount(label, rows, events, _rounded(event_rate(rows, events)), woe,
                               float(iv) if isinstance(iv, (int, float)) and not isinstance(iv, bool) else math.nan))
    iv = stats.get("iv")
    iv = float(iv) if isinstance(iv, (int, float)) and not isinstance(iv, bool) else math.nan
    if counted and len(problems) == known:
        if math.isnan(iv):
            problems.append(source.problem(path, "the characteristic has no iv; recount the file with "
                                                 "scoremon bin --recount"))
        _check_counts(feature, counts, path, places, header, source, problems)
    return BinnedFeature(feature, iv, tuple(counts))


def _woes(feature: BinnedSpecFeature) -> list[float]:
    if isinstance(feature, NumericFeature):
        values = list(feature.bins) + [feature.missing]
    else:
        values = list(feature.groups) + [feature.other, feature.missing]
    return [v.woe if v.woe is not None else math.nan for v in values]


def _check_counts(feature, counts, path, places, header, source, problems) -> None:
    """A counted file's numbers must agree: bins add up to the table, WoE follows the counts."""
    total_rows, total_events = header["rows"], header["events"]
    if sum(c.rows for c in counts) != total_rows or sum(c.events for c in counts) != total_events:
        problems.append(source.problem(path, f"the bins of {feature.name!r} hold {sum(c.rows for c in counts)} rows "
                                             f"and {sum(c.events for c in counts)} events, the table {total_rows} "
                                             f"and {total_events}; recount the file with scoremon bin --recount"))
        return
    if total_events == 0 or total_events == total_rows:
        problems.append(source.problem(("binning", "events"), "the table needs both events and non-events"))
        return
    for place, count in zip(places, counts):
        expected = bin_evidence(count.rows, count.events, total_rows, total_events).woe
        if not abs(expected - count.woe) <= 2 * 10 ** -DECIMALS:
            problems.append(source.problem(path + place + ("woe",), f"woe {count.woe} does not follow from rows "
                                                                    f"{count.rows} and events {count.events} "
                                                                    f"({expected:.6f}); recount the file with "
                                                                    "scoremon bin --recount"))

