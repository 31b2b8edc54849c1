"""``scorecard monitor``: a live scorecard, period by period, against its development sample.

One pass scores the file and counts its rows by (period, score) and by (period, characteristic,
bin) (:func:`period_counts`, the counting :mod:`scorecard.evaluation.comparison` uses with one
group). Every period is then compared with the baseline exactly as ``scorecard compare`` compares
a current file: the same score bands, cut at the baseline's score deciles, and the same indices,
statuses and sample-size-aware critical values. So a period's indices are those of ``compare``
run on that period's rows alone.

The baseline is the development sample stored in the model file (score histogram and bin counts)
or, for model files written before those were stored, a data file given as ``baseline``.

Per period: rows, refused rows, mean score, the score's stability index and every
characteristic's, the approval rate at a cut-off (rows scoring at or above it, over every row
read, so refused rows count as declined), the bad rate the scores predict for all scored rows,
and, where at least ``min_bads`` goods and ``min_bads`` bads have an outcome, the observed bad
rate against the predicted one for those rows, Gini with DeLong's interval and KS with a
bootstrap interval.

A segmented model is monitored as ``compare`` compares it: the score's measures on the pooled
scores of every segment, each card's characteristics on its own segment's rows, named
``<characteristic> (<segment>)``. Its stored development baseline is every card's development
counts pooled; the development AUC, Gini and KS are per card and do not pool, so the
development summary leaves them out. Beside the pooled figures every period gets each
segment's own (:class:`SegmentPeriod`): its rows, its score index against that segment's
baseline (bands cut at its own baseline deciles; its card's development counts, or its rows of
the baseline file), and Gini and KS with intervals where the segment has ``min_bads`` goods
and bads; the development summary gets each card's own holdout Gini and KS. The period's
status stays that of the pooled score and the characteristics.
"""

from __future__ import annotations

import json
import math
from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.card.scorecard import Scorecard
from scorecard.card.segmented import SegmentedScorecard, load_model
from scorecard.card.scoring import bad_probability
from scorecard.data.samples import parse_dates
from scorecard.errors import InputError
from scorecard.constraints import SCORE_BANDS, SHIFT, WATCH
from scorecard.evaluation.comparison import (
    _count_file,
    _FileCounts,
    _finite,
    _stability,
    check_band_options,
    counts_of_group,
    score_index,
)
from scorecard.evaluation.group_counts import GroupCounts, count_groups
from scorecard.evaluation.scored_rows import outcome_labels, read_rows
from scorecard.evaluation.segment_counts import (
    SegmentCounts,
    count_segments,
    merge_segment_counts,
    pooled_card,
)
from scorecard.evaluation.histograms import ScoreHistogram, band_edges
from scorecard.evaluation.stability import IndexResult
from scorecard.measures.ranking import gini_interval, ks_interval

MONTH, QUARTER = "month", "quarter"
EVERY = (MONTH, QUARTER)
# Fewest goods and fewest bads a period needs before its outcomes are read (common practice:
# a Gini on a few dozen bads is mostly noise).
DEFAULT_MIN_BADS = 30
STATUS_ORDER = ("stable", "watch", "shift")


def period_keys(series: pd.Series, name: str, every: str) -> np.ndarray:
    """Months (or quarters) since January 1970 of each date in ``series``.

    Examples
    --------
    >>> period_keys(pd.Series(["2026-01-15", "2026-04-01"]), "applied_on", "quarter").tolist()
    [224, 225]
    """
    dates = parse_dates(series, name)
    empty = np.isnat(dates)
    if empty.any():
        at = int(np.flatnonzero(empty)[0])
        label = series.index[at]
        row = int(label) + 1 if isinstance(label, (int, np.integer)) else at + 1
        raise InputError(f"column {name}: row {row}: no date, so the row has no period")
    months = dates.astype("datetime64[M]").astype(np.int64)
    return months // 3 if every == QUARTER else months


def period_label(key: int, every: str) -> str:
    """``'2026-07'`` for a month, ``'2026-Q3'`` for a quarter.

    Examples
    --------
    >>> period_label(678, "month"), period_label(226, "quarter")
    ('2026-07', '2026-Q3')
    """
    if every == QUARTER:
        return f"{1970 + key // 4}-Q{key % 4 + 1}"
    return f"{1970 + key // 12}-{key % 12 + 1:02d}"


def period_counts(frame: pd.DataFrame, card: Scorecard, column: str, every: str):
    """The pass of ``monitor`` over one chunk of rows: counts per period (see the module).

    Under a segmented model each row is counted with its segment's card, and the result is a
    :class:`~scorecard.evaluation.segment_counts.SegmentCounts` (pooled and per segment)."""
    keys = period_keys(frame[column], column, every)
    if isinstance(card, SegmentedScorecard):
        return count_segments(card, frame, outcome_labels(card, frame), keys)
    return count_groups(card, frame, keys, outcome_labels(card, frame))


class Outcomes(NamedTuple):
    """What the rows with a known outcome say about one period."""

    goods: int
    bads: int
    bad_rate: float
    predicted_bad_rate: float
    gini: float
    gini_low: float
    gini_high: float
    ks: float
    ks_low: float
    ks_high: float


class SegmentPeriod(NamedTuple):
    """One segment of a segmented model in one period, against that segment's baseline.

    ``score`` is None where the period's segment has no scored row; ``outcomes`` as in
    :class:`PeriodResult`.
    """

    rows: int
    rejected: int
    mean_score: float
    score: IndexResult | None
    outcome_rows: int
    outcomes: Outcomes | None

    def to_dict(self) -> dict:
        s, o = self.score, self.outcomes
        return {"rows": self.rows, "rejected": self.rejected, "mean_score": self.mean_score,
                "score": None if s is None else {
                    "psi": s.index, "status": s.status, "critical_value": s.critical_value,
                    "beyond_chance": s.beyond_chance},
                "gini": None if o is None else o.gini, "ks": None if o is None else o.ks,
                "outcome_rows": self.outcome_rows,
                "outcomes": None if o is None else o._asdict()}


class PeriodResult(NamedTuple):
    """One period against the baseline.

    ``score`` and ``characteristics`` are the same :class:`IndexResult` objects ``compare``
    gives; ``outcomes`` is None where too few goods or bads are known (``outcome_rows`` says
    how many are).
    """

    period: str
    rows: int
    rejected: int
    mean_score: float
    score: IndexResult
    characteristics: tuple[IndexResult, ...]
    approval_rate: float | None
    expected_bad_rate: float
    outcome_rows: int
    outcomes: Outcomes | None
    segments: dict = {}     # segment name -> SegmentPeriod, under a segmented model

    @property
    def status(self) -> str:
        """The worst status of the score's and every characteristic's index."""
        found = [self.score.status] + [r.status for r in self.characteristics]
        return max(found, key=STATUS_ORDER.index)

    def reached(self, status: str) -> bool:
        return STATUS_ORDER.index(self.status) >= STATUS_ORDER.index(status)


class Monitoring(NamedTuple):
    """Stability and performance of a scorecard per period of one file."""

    model: str
    data: str
    period_column: str
    every: str
    baseline: str
    cutoff: int | None
    min_bads: int
    watch: float
    shift: float
    development: dict
    periods: tuple[PeriodResult, ...]

    @property
    def latest(self) -> PeriodResult:
        return self.periods[-1]

    def to_dict(self) -> dict:
        """The ``monitor --json`` content (DESIGN.md's keys, with extra keys beside them)."""
        return {"periods": [_period_dict(p) for p in self.periods],
                "every": self.every, "period_column": self.period_column,
                "baseline": self.baseline, "cutoff": self.cutoff, "min_bads": self.min_bads,
                "development": self.development, "latest_status": self.latest.status}

    def to_json(self) -> str:
        return json.dumps(_finite(self.to_dict()), indent=1, allow_nan=False) + "\n"

    def table(self) -> pd.DataFrame:
        """Period by index: the development baseline first, then every period."""
        dev = self.development
        rows = [{"Period": "development", "Rows": dev["rows"], "Refused": np.nan,
                 "Mean score": dev["mean_score"], "Score PSI": np.nan, "Score status": "",
                 "Critical value": np.nan, "Approval rate": dev["approval_rate"],
                 "Expected bad rate": dev["expected_bad_rate"], "Bad rate": dev["bad_rate"],
                 "Predicted bad rate": dev["predicted_bad_rate"], "Gini": dev["gini"],
                 "Gini low": np.nan, "Gini high": np.nan, "KS": dev["ks"], "KS low": np.nan,
                 "KS high": np.nan, "Characteristics at watch": "",
                 "Characteristics at shift": ""}]
        for p in self.periods:
            o = p.outcomes
            rows.append({
                "Period": p.period, "Rows": p.rows, "Refused": p.rejected,
                "Mean score": p.mean_score, "Score PSI": p.score.index,
                "Score status": p.score.status, "Critical value": p.score.critical_value,
                "Approval rate": np.nan if p.approval_rate is None else p.approval_rate,
                "Expected bad rate": p.expected_bad_rate,
                **{k: np.nan if o is None else v for k, v in (
                    ("Bad rate", o and o.bad_rate), ("Predicted bad rate", o and o.predicted_bad_rate),
                    ("Gini", o and o.gini), ("Gini low", o and o.gini_low),
                    ("Gini high", o and o.gini_high), ("KS", o and o.ks),
                    ("KS low", o and o.ks_low), ("KS high", o and o.ks_high))},
                "Characteristics at watch": ", ".join(
                    r.name for r in p.characteristics if r.status == "watch"),
                "Characteristics at shift": ", ".join(
                    r.name for r in p.characteristics if r.status == "shift")})
        return pd.DataFrame(rows)

    def text(self) -> str:
        """The period table for a terminal."""
        lines = [f"{self.data}: {len(self.periods)} periods by {self.every} of "
                 f"{self.period_column}, against {self.baseline}",
                 f"{'period':11}{'rows':>7}{'mean':>7}{'PSI':>8}  {'status':7}"
                 f"{'approved':>9}{'bad rate':>9}{'predicted':>10}{'Gini':>7}  {'95% interval':13}"
                 "characteristics moved"]
        for p in self.periods:
            o = p.outcomes
            approved = "" if p.approval_rate is None else f"{p.approval_rate:.1%}"
            perf = (f"{o.bad_rate:9.2%}{o.predicted_bad_rate:10.2%}{o.gini:7.3f}  "
                    f"{o.gini_low:.3f}-{o.gini_high:.3f}  ") if o else f"{'':9}{'':10}{'':7}  {'':13}"
            moved = ", ".join(f"{r.name} {r.status}" for r in p.characteristics
                              if r.status != "stable")
            lines.append(f"{p.period:11}{p.rows:7d}{p.mean_score:7.1f}{p.score.index:8.4f}  "
                         f"{p.score.status:7}{approved:>9}{perf}{moved}")
            lines.extend(_segment_line(name, part) for name, part in p.segments.items())
        return "\n".join(lines)


def _segment_line(name: str, part: SegmentPeriod) -> str:
    # Under the period's line: each segment's own index, against that segment's baseline.
    s, o = part.score, part.outcomes
    index = "not assessed" if s is None else f"{s.index:.4f} {s.status}"
    mean = "" if part.rows == part.rejected else f", mean {part.mean_score:.1f}"
    gini = "" if o is None else f", Gini {o.gini:.3f} ({o.gini_low:.3f}-{o.gini_high:.3f})"
    return f"  segment {name}: {part.rows} rows{mean}, score PSI {index}{gini}"


def _period_dict(p: PeriodResult) -> dict:
    o = p.outcomes
    return {
        "period": p.period, "rows": p.rows,
        "score": {"psi": p.score.index, "status": p.score.status,
                  "critical_value": p.score.critical_value,
                  "beyond_chance": p.score.beyond_chance},
        "characteristics": {r.name: {"csi": r.index, "status": r.status,
                                     "critical_value": r.critical_value,
                                     "beyond_chance": r.beyond_chance}
                            for r in p.characteristics},
        "gini": None if o is None else o.gini,
        "status": p.status, "rejected": p.rejected, "mean_score": p.mean_score,
        "approval_rate": p.approval_rate, "expected_bad_rate": p.expected_bad_rate,
        "outcome_rows": p.outcome_rows,
        "outcomes": None if o is None else o._asdict(),
        **({"segments": {name: part.to_dict() for name, part in p.segments.items()}}
           if p.segments else {}),
    }


def baseline_from_model(card: Scorecard, source: str) -> _FileCounts:
    """The development sample stored in the model file, as the counts of a baseline file."""
    dev = card.development
    if dev is None:
        raise InputError(f"{source}: the model file holds no development distributions (it "
                         "was built before they were stored); give --baseline with the "
                         "development data file, or rebuild")
    goods, bads = np.array(dev.score_goods), np.array(dev.score_bads)
    # The development sample's own counts per bin: the bins' counts include inferred rejects
    # when the card was built with reject inference.
    bin_goods = [np.array(dev.bin_goods.get(c.name, [b.goods for b in c.bins]), dtype=float)
                 for c in card.characteristics]
    bin_bads = [np.array(dev.bin_bads.get(c.name, [b.bads for b in c.bins]), dtype=float)
                for c in card.characteristics]
    return _FileCounts("development sample (model file)", dev.rows, 0, goods + bads, goods, bads,
                       [g + b for g, b in zip(bin_goods, bin_bads)], bin_goods, bin_bads, 0, {})


def _scored_mean(card, score_rows: np.ndarray) -> float:
    total = score_rows.sum()
    scores = np.arange(card.min_score, card.max_score + 1)
    return float((scores * score_rows).sum() / total) if total > 0 else math.nan


def _approval(card, score_rows: np.ndarray, rows: float, cutoff) -> float | None:
    if cutoff is None or rows <= 0:
        return None
    at = max(0, cutoff - card.min_score)
    return float(score_rows[at:].sum() / rows)


def _expected_bad_rate(card, score_rows: np.ndarray) -> float:
    total = score_rows.sum()
    if total <= 0:
        return math.nan
    p = bad_probability(card, np.arange(card.min_score, card.max_score + 1))
    return float((score_rows * p).sum() / total)


def _outcomes(card, counts: _FileCounts, min_bads: int, level: float) -> Outcomes | None:
    goods, bads = counts.score_goods, counts.score_bads
    if goods is None or goods.sum() < min_bads or bads.sum() < min_bads:
        return None
    labelled = goods + bads
    gini = gini_interval(goods, bads, level)
    ks = ks_interval(goods, bads, level)
    return Outcomes(int(goods.sum()), int(bads.sum()), float(bads.sum() / labelled.sum()),
                    _expected_bad_rate(card, labelled), gini.estimate, gini.low, gini.high,
                    ks.estimate, ks.low, ks.high)


def _development_summary(card: Scorecard, base: _FileCounts, cutoff) -> dict:
    perf = {}
    if card.development is not None:
        stored = card.development.performance
        perf = stored.get("holdout") or stored.get("development") or {}
    outcome = base.score_goods is not None and base.score_bads.sum() > 0
    labelled = base.score_goods + base.score_bads if outcome else None
    return {"rows": base.rows, "mean_score": _scored_mean(card, base.score_rows),
            "approval_rate": _approval(card, base.score_rows, base.score_rows.sum(), cutoff),
            "expected_bad_rate": _expected_bad_rate(card, base.score_rows),
            "bad_rate": float(base.score_bads.sum() / labelled.sum()) if outcome else math.nan,
            "predicted_bad_rate": _expected_bad_rate(card, labelled) if outcome else math.nan,
            "gini": perf.get("gini", math.nan), "ks": perf.get("ks", math.nan)}


def _check_options(every, bands, watch, shift, min_bads, cutoff, level):
    if every not in EVERY:
        raise InputError(f"--every {every}: must be month or quarter")
    check_band_options(bands, watch, shift)
    if not (isinstance(min_bads, int) and min_bads >= 2):
        raise InputError(f"--min-bads: must be a whole number of at least 2, got {min_bads!r}")
    if cutoff is not None and not isinstance(cutoff, int):
        raise InputError(f"--cutoff: must be a whole score, got {cutoff!r}")
    if not 0 < level < 1:
        raise InputError(f"level: must lie strictly between 0 and 1, got {level!r}")


def count_periods(card: Scorecard, data, column: str, every: str, engine=None):
    """Counts of ``data`` per period, from one pass on ``engine`` (default: a local engine):
    GroupCounts, or SegmentCounts under a segmented model.

    The local engine reads only the columns the pass needs and runs it in chunks; a Dask
    engine (:class:`scorecard.engines.dask_engine.DaskEngine`) runs it on every partition of a
    Parquet file or folder and merges the counts on the workers.
    """
    from scorecard.data.read import read_frame
    from scorecard.engines.local import LocalEngine
    whole = None
    names = _column_names(data) if engine is None else list(engine.columns)
    if names is None:
        whole = read_frame(data)
        names = list(whole.columns)
    if column not in names:
        raise InputError(f"{data}: column {column}: --period names a column the file lacks")
    absent = [n for n in card.names if n not in names]
    if absent:
        raise InputError(f"{data}: column {absent[0]}: the scorecard needs it but the file "
                         "lacks it")
    target = (card.target or {}).get("column")
    rule = getattr(card, "rule", None)     # a segmented model also reads its segment column
    if rule is not None and rule.column not in names:
        raise InputError(f"{data}: column {rule.column}: the segmented model picks its card by "
                         "it but the file lacks it")
    wanted = list(dict.fromkeys(list(card.names) + [column]
                                + ([rule.column] if rule is not None else [])
                                + ([target] if target in names else [])))
    own = engine is None
    if own:
        engine = LocalEngine(read_frame(data, columns=wanted) if whole is None else whole[wanted])
    try:
        return engine.reduce(period_counts, merge_periods, None, card, column, every,
                             columns=wanted)
    except InputError as exc:
        raise InputError(f"{data}: {exc}") from None
    finally:
        if own:
            engine.close()


def merge_periods(a, b):
    """Counts of two chunks as one: GroupCounts, or SegmentCounts under a segmented model."""
    if isinstance(a, SegmentCounts):
        return merge_segment_counts(a, b)
    from scorecard.evaluation.group_counts import merge_group_counts
    return merge_group_counts(a, b)


def _column_names(path) -> list[str] | None:
    """The column names of a CSV or Parquet file from its header or schema alone; None for
    other kinds of file (they are read whole)."""
    from pathlib import Path

    import pyarrow as pa
    import pyarrow.csv as pacsv
    import pyarrow.dataset as pads
    import pyarrow.parquet as pq

    from scorecard.data.formats import data_format, is_tab_separated
    from scorecard.data.formats import csv_source

    path = Path(path)
    if not path.exists():
        raise InputError(f"{path}: data file not found")
    try:
        if path.is_dir():
            return list(pads.dataset(path, format="parquet").schema.names)
        kind = data_format(path)
        if kind == "parquet":
            return list(pq.read_schema(path).names)
        if kind not in ("csv", "zip"):
            return None
        if path.stat().st_size == 0:
            raise InputError(f"{path}: the file is empty")
        parse = pacsv.ParseOptions(delimiter="\t" if is_tab_separated(path) else ",")
        reader = pacsv.open_csv(csv_source(path), parse_options=parse)
        names = list(reader.schema.names)
        reader.close()
        return names
    except (pa.ArrowInvalid, OSError, UnicodeDecodeError) as exc:
        first = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
        raise InputError(f"{path}: cannot read the data: {first}") from None


def monitor(model_path, data_path, period, *, every=MONTH, baseline=None, cutoff=None,
            bands=None, min_bads=DEFAULT_MIN_BADS, watch=None, shift=None, level=0.95,
            engine=None) -> Monitoring:
    """Stability and performance of a scorecard for every period of a file.

    Parameters
    ----------
    model_path : path
        A model file written by ``scorecard build``.
    data_path : path
        CSV, Parquet file or folder of Parquet files with every characteristic of the card and
        the ``period`` column; the outcome column is optional.
    period : str
        Column of dates that places each row in a period.
    every : {'month', 'quarter'}
    baseline : path, optional
        A data file to compare with instead of the development sample in the model file
        (needed for model files written before it was stored).
    cutoff : int, optional
        Score at or above which an application is approved, for the approval rate.
    bands : int, optional
        Score bands, cut at the baseline's deciles (default 10), as in ``compare``.
    min_bads : int, default 30
        Fewest goods and fewest bads before a period's outcomes are read.
    watch, shift : float, optional
        Status cut-offs (default 0.10 and 0.25, common practice).
    level : float, default 0.95
        Confidence level of the Gini and KS intervals.
    engine : engine, optional
        Where the pass runs (see :func:`count_periods`).

    Returns
    -------
    Monitoring

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from scorecard.card.scorecard import Bin, Characteristic, Development, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> char = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> dev = Development(200, "rows", (60.0,) + (0.0,) * 19 + (90.0,), (40.0,) + (0.0,) * 19 + (10.0,))
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "card.json").write_text(Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                                                 (char,), development=dev).to_json())
    >>> _ = (folder / "a.csv").write_text("x,on\\n0.5,2026-01-03\\n2,2026-01-09\\n3,2026-02-01\\n")
    >>> result = monitor(folder / "card.json", folder / "a.csv", "on")
    >>> [(p.period, p.rows) for p in result.periods]
    [('2026-01', 2), ('2026-02', 1)]
    """
    bands = SCORE_BANDS.default if bands is None else bands
    watch = WATCH.default if watch is None else watch
    shift = SHIFT.default if shift is None else shift
    _check_options(every, bands, watch, shift, min_bads, cutoff, level)
    model = load_model(model_path)
    # A segmented model's scores pool (one scale); its characteristics stay per segment card.
    card = pooled_card(model) if isinstance(model, SegmentedScorecard) else model
    if baseline is None:
        base = baseline_from_model(card, str(model_path))
        baseline_name = base.path
        base_parts = {name: baseline_from_model(c, str(model_path))
                      for name, c in getattr(model, "segments", {}).items()}
    else:
        base, base_parts = _count_file(model, baseline, read_rows(baseline))
        baseline_name = str(baseline)
    if base.score_rows.sum() == 0:
        raise InputError(f"{baseline_name}: the scorecard refuses every row, so there are no "
                         "scores to cut bands on")
    starts = band_edges(ScoreHistogram(card.min_score, base.score_rows,
                                       np.zeros_like(base.score_rows)), bands)
    counts = count_periods(model, data_path, period, every, engine)
    parts = {}
    if isinstance(counts, SegmentCounts):
        counts, parts = counts.pooled, counts.segments
    own_starts = {name: band_edges(ScoreHistogram(model.segments[name].min_score, b.score_rows,
                                                  np.zeros_like(b.score_rows)), bands)
                  for name, b in base_parts.items() if b.score_rows.sum() > 0}
    periods = []
    for i, key in enumerate(counts.groups):
        label = period_label(int(key), every)
        cur = counts_of_group(counts, i, label)
        if cur.score_rows.sum() == 0:
            raise InputError(f"{data_path}: period {label}: the scorecard refuses every row, "
                             "so there are no scores to compare")
        stability = _stability(card, base, cur, starts, watch, shift)
        labelled = 0 if cur.score_goods is None else int(cur.score_goods.sum()
                                                         + cur.score_bads.sum())
        periods.append(PeriodResult(
            label, cur.rows, cur.rejected, _scored_mean(card, cur.score_rows), stability.score,
            stability.characteristics, _approval(card, cur.score_rows, cur.rows, cutoff),
            _expected_bad_rate(card, cur.score_rows), labelled,
            _outcomes(card, cur, min_bads, level),
            {name: _segment_period(model.segments[name], base_parts[name],
                                   _group(part, key, label), own_starts.get(name), watch, shift,
                                   min_bads, level)
             for name, part in parts.items()}))
    development = _development_summary(card, base, cutoff)
    if base_parts:
        development["segments"] = {name: _development_summary(model.segments[name], b, cutoff)
                                   for name, b in base_parts.items()}
    return Monitoring(str(model_path), str(data_path), period, every, baseline_name, cutoff,
                      min_bads, watch, shift, development, tuple(periods))


def _group(counts: GroupCounts, key, label: str) -> _FileCounts:
    """The counts of the group ``key`` (every group of a pass is present in each segment's)."""
    return counts_of_group(counts, int(np.searchsorted(counts.groups, key)), label)


def _segment_period(card, base: _FileCounts, cur: _FileCounts, starts, watch, shift,
                    min_bads: int, level: float) -> SegmentPeriod:
    """One segment's period against its own baseline (see the module docstring)."""
    scored = cur.score_rows.sum() > 0 and starts is not None
    labelled = 0 if cur.score_goods is None else int(cur.score_goods.sum()
                                                     + cur.score_bads.sum())
    return SegmentPeriod(cur.rows, cur.rejected, _scored_mean(card, cur.score_rows),
                         score_index(card, base, cur, starts, watch, shift) if scored else None,
                         labelled, _outcomes(card, cur, min_bads, level))
