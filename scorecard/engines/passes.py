"""The passes over the rows. Each takes one chunk of rows and returns small count tables.

Counts from different chunks add up, so an engine may run a pass over one in-memory frame or
over the partitions of a Dask dataframe and merge the results with the matching ``merge_*``
function. Merging in chunk order keeps every result independent of how the rows were cut.

Within a chunk the characteristics are coded on a few threads: the heavy numpy loops
(``searchsorted``, comparisons, gathers) release the interpreter lock.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.binning.fine import (
    NumericLayout,
    numeric_coder,
    numeric_summary,
    regular_range,
)
from scorecard.card.scoring import apply_scorecard, bin_codes
from scorecard.data.coding import categorical_codes, level_labels, numeric_values
from scorecard.data.outcome import BAD, GOOD
from scorecard.data.samples import DEVELOPMENT, EXCLUDED
from scorecard.engines.patterns import Patterns, distinct_patterns, merge_distinct

N_SAMPLES = 3  # development, holdout, out of time
MAX_THREADS = 4
REPORTED = 5     # extreme values reported by row number, per characteristic
_THREAD_ROWS = 50_000   # below this a chunk is coded faster than threads start
# Rows per block when laying per-characteristic codes side by side: a block of the code matrix
# then stays in cache while every column is written into it.
_FILL_ROWS = 1 << 16
# Rows per block of the fused fine-class pass over one numeric column: its temporaries, a few
# arrays of this many 8-byte values, stay in the cache.
_FINE_ROWS = 1 << 14


class RowFacts(NamedTuple):
    """Per-row outcome, weight and sample of one chunk."""

    label: np.ndarray
    weight: np.ndarray
    sample: np.ndarray


class SegmentFacts(NamedTuple):
    """Per-row outcome, weight, sample and segment code of one chunk.

    A segmented build counts every segment in the same passes: the segment is one more code
    beside the sample and the outcome. ``own(s)`` gives the facts one segment's card is built
    on, the other segments' rows outside every sample.

    Examples
    --------
    >>> rows = SegmentFacts(np.zeros(3, np.int8), np.ones(3), np.zeros(3, np.int8),
    ...                     np.array([0, 1, 0], np.int8))
    >>> rows.own(1).sample.tolist()
    [-1, 0, -1]
    """

    label: np.ndarray
    weight: np.ndarray
    sample: np.ndarray
    segment: np.ndarray

    def own(self, index: int) -> RowFacts:
        return RowFacts(self.label, self.weight,
                        np.where(self.segment == index, self.sample, EXCLUDED).astype(np.int8))

    def members(self, index: int) -> tuple[np.ndarray, RowFacts]:
        """Positions of the segment's rows in the chunk, and their facts alone."""
        at = np.flatnonzero(self.segment == index)
        return at, RowFacts(self.label[at], self.weight[at], self.sample[at])


def pass_threads() -> int:
    """Threads a pass may use inside one chunk: the cores this process may run on, at most 4."""
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not every platform reports the affinity
        cores = os.cpu_count() or 1
    return max(1, min(MAX_THREADS, cores))


def _each(fn, items: list, rows: int) -> list:
    if len(items) < 2 or rows < _THREAD_ROWS or pass_threads() == 1:
        return [fn(item) for item in items]
    with ThreadPoolExecutor(pass_threads()) as pool:
        return list(pool.map(fn, items))


def column_summary(frame: pd.DataFrame, kinds: dict, sentinels: dict) -> dict:
    """Per column: a :class:`NumericSummary` of the regular numeric values (range and counts
    by magnitude), or the set of categorical levels."""
    def one(item):
        name, kind = item
        series = frame[name]
        if kind == "numeric":
            return name, numeric_summary(numeric_values(series, name), sentinels[name])
        cat = series if isinstance(series.dtype, pd.CategoricalDtype) else series.astype("category")
        seen = np.bincount(cat.cat.codes.to_numpy() + 1, minlength=len(cat.cat.categories) + 1)
        return name, frozenset(level_labels(cat.cat.categories[seen[1:] > 0]))
    return dict(_each(one, list(kinds.items()), len(frame)))


def merge_summaries(a: dict, b: dict) -> dict:
    out = dict(a)
    for name, value in b.items():
        if name not in out:
            out[name] = value
        elif isinstance(value, frozenset):
            out[name] = out[name] | value
        else:
            out[name] = out[name].merged(value)
    return out


class _Counter(NamedTuple):
    """Weights by (code, sample, outcome): :meth:`keys` turns codes into cells of that table,
    :meth:`table` adds the weights up by cell, and calling it does both.

    With ``segments`` (a segmented build), the cell holds the segment too, and :meth:`table`
    gives one table per segment.
    """

    weight: np.ndarray
    cell: np.ndarray
    segments: int = 0

    def keys(self, codes: np.ndarray, start: int = 0, out=None) -> np.ndarray:
        """The cell of each code, for the rows from ``start`` on; into ``out`` if given."""
        cell = self.cell[start:start + len(codes)]
        out = np.multiply(codes, N_SAMPLES * 2 * max(self.segments, 1), out=out)
        out += cell
        return out

    def table(self, keys: np.ndarray, n_codes: int):
        cells = N_SAMPLES * 2 * max(self.segments, 1)
        table = np.bincount(keys, weights=self.weight, minlength=n_codes * cells)
        if not self.segments:
            return table.reshape(n_codes, N_SAMPLES, 2)
        table = table.reshape(n_codes, self.segments, N_SAMPLES, 2)
        return [np.ascontiguousarray(table[:, s]) for s in range(self.segments)]

    def __call__(self, codes: np.ndarray, n_codes: int) -> np.ndarray:
        return self.table(self.keys(codes), n_codes)


def _sample_outcome_counter(rows: RowFacts) -> _Counter:
    """A function from (codes, number of codes) to weights by (code, sample, outcome)."""
    kept = rows.sample != EXCLUDED
    # Left-out rows weigh nothing, so every row can take part and no row selection is made.
    weight = np.where(kept, rows.weight, 0.0)
    cell = np.where(kept, rows.sample.astype(np.intp) * 2 + rows.label, 0)
    return _Counter(weight, cell)


class FineCounts(NamedTuple):
    """Weights per fine code by sample and outcome, and the development value range.

    ``table`` has shape (codes, 3, 2): samples as in :data:`scorecard.data.samples.SAMPLE_NAMES`,
    outcomes good then bad. The classing reads the development part; the other samples let a
    characteristic's bins be counted from its fine classes without another pass.
    ``extremes`` counts the values beyond the layout's extreme bounds, ``extreme_rows`` holds
    the positions of the first few (from the first row of the counted rows, of which there are
    ``rows``), so that chunks merge into positions in the whole file.
    """

    table: np.ndarray
    development_range: tuple[float, float] | None
    rows: int = 0
    extremes: int = 0
    extreme_rows: tuple[int, ...] = ()

    @property
    def goods(self) -> np.ndarray:
        return self.table[:, DEVELOPMENT, GOOD]

    @property
    def bads(self) -> np.ndarray:
        return self.table[:, DEVELOPMENT, BAD]


def fine_counts(frame: pd.DataFrame, rows: RowFacts, layouts: dict) -> dict:
    """Fine-class counts by sample and outcome for every characteristic.

    ``layouts`` maps a name to a :class:`NumericLayout` or to the tuple of its levels.
    Categorical codes are the level index, with the missing code last.

    Examples
    --------
    >>> rows = RowFacts(np.array([0, 1, 0], np.int8), np.ones(3), np.zeros(3, np.int8))
    >>> c = fine_counts(pd.DataFrame({"x": [1.0, 5.0, None]}), rows,
    ...                 {"x": NumericLayout(np.array([2.0]), ())})["x"]
    >>> c.goods.tolist(), c.bads.tolist(), c.development_range
    ([1.0, 0.0, 1.0], [0.0, 1.0, 0.0], (1.0, 5.0))
    """
    dev = rows.sample == DEVELOPMENT
    counted = _sample_outcome_counter(rows)

    def one(item):
        name, layout = item
        series = frame[name]
        if isinstance(layout, NumericLayout):
            return name, _numeric_fine(numeric_values(series, name), layout, counted, dev)
        idx = categorical_codes(series, layout)
        return name, FineCounts(counted(np.where(idx < 0, len(layout), idx), len(layout) + 1),
                                None, len(idx))

    return dict(_each(one, list(layouts.items()), len(frame)))


def _numeric_fine(x: np.ndarray, layout: NumericLayout, counted: _Counter,
                  dev: np.ndarray) -> FineCounts:
    """One numeric column's fine counts in one pass (see :func:`_numeric_fine_each`)."""
    return _numeric_fine_each(x, layout, counted, [dev])[0]


def _numeric_fine_each(x: np.ndarray, layout: NumericLayout, counted: _Counter,
                       devs: list) -> list[FineCounts]:
    """One numeric column's fine counts in one pass, one :class:`FineCounts` per development
    mask in ``devs`` (one per segment when ``counted`` has segments, else one).

    A block of rows at a time is coded, keyed by cell, searched for extreme values and for
    each range, while it is in the cache. Only the keys are kept whole, and one count over
    them adds the weights in row order, as a count of the whole column would. Values far
    beyond the layout's bounds are counted over every row."""
    code = numeric_coder(layout)
    keys = np.empty(len(x), dtype=np.intp)
    below, above = layout.extreme
    bounded = bool(np.isfinite(below) or np.isfinite(above))
    lows, highs, extremes, first = [np.nan] * len(devs), [np.nan] * len(devs), 0, []
    for start in range(0, len(x), _FINE_ROWS):
        stop = min(start + _FINE_ROWS, len(x))
        block = x[start:stop]
        counted.keys(code(block), start, out=keys[start:stop])
        if bounded:
            far = np.flatnonzero((block < below) | (block > above))
            extremes += len(far)
            first.extend(start + int(i) for i in far[:REPORTED - len(first)])
        for i, dev in enumerate(devs):
            block_low, block_high = regular_range(block, layout.sentinels, dev[start:stop])
            lows[i], highs[i] = np.fmin(lows[i], block_low), np.fmax(highs[i], block_high)
    tables = counted.table(keys, layout.n_codes)
    if not counted.segments:
        tables = [tables]
    return [FineCounts(table, (float(low), float(high)) if len(x)
                       else regular_range(x, layout.sentinels), len(x), extremes, tuple(first))
            for table, low, high in zip(tables, lows, highs)]


def merge_fine(a: dict, b: dict) -> dict:
    out = {}
    for name, fa in a.items():
        fb = b[name]
        rng = None
        if fa.development_range is not None:
            rng = (float(np.fmin(fa.development_range[0], fb.development_range[0])),
                   float(np.fmax(fa.development_range[1], fb.development_range[1])))
        later = tuple(fa.rows + i for i in fb.extreme_rows)
        out[name] = FineCounts(fa.table + fb.table, rng, fa.rows + fb.rows,
                               fa.extremes + fb.extremes, (fa.extreme_rows + later)[:REPORTED])
    return out


def coded_patterns(frame: pd.DataFrame, rows: RowFacts, drafts) -> Patterns:
    """Counts per distinct (sample, outcome, bin of each characteristic) over the chunk.

    The first two columns of the pattern codes are the sample and the outcome (0 good, 1 bad);
    the rest are the bin index of each characteristic in ``drafts`` order. Weights: one column.
    Rows outside every sample are left out.
    """
    keep = rows.sample != EXCLUDED
    every = bool(keep.all())

    def one(char):
        codes = bin_codes(char, frame[char.name])[0]
        return codes if every else codes[keep]

    columns = [rows.sample if every else rows.sample[keep],
               rows.label if every else rows.label[keep]] + _each(one, list(drafts), len(frame))
    radix = pattern_radix(drafts)
    weight = rows.weight if every else rows.weight[keep]
    return distinct_patterns(_side_by_side(columns), radix, [weight])


def pattern_radix(drafts) -> list[int]:
    """Number of values of each pattern column: samples, outcomes, then bins per characteristic."""
    return [N_SAMPLES, 2] + [len(c.bins) for c in drafts]


def _side_by_side(columns: list) -> np.ndarray:
    n = len(columns[0])
    out = np.empty((n, len(columns)), dtype=np.int16)
    for start in range(0, n, _FILL_ROWS):
        block = out[start:start + _FILL_ROWS]
        for j, column in enumerate(columns):
            block[:, j] = column[start:start + _FILL_ROWS]
    return out


def merge_patterns(a: Patterns, b: Patterns, radix) -> Patterns:
    """Patterns of two chunks as one table; ``a``'s chunk comes first in the rows."""
    return merge_distinct(a, b, radix)


def bin_counts(frame: pd.DataFrame, rows: RowFacts, drafts) -> list[np.ndarray]:
    """Per characteristic: weights by (bin, sample, outcome), an array of shape (bins, 3, 2).

    Rows outside every sample are left out. The build needs this pass only for characteristics
    whose bins are not unions of fine classes (see :func:`scorecard.binning.coarse.bins_of_fine_classes`).

    Examples
    --------
    >>> from scorecard.card.scorecard import RANGE, Bin, Characteristic
    >>> bins = (Bin("< 2", RANGE, 1, 0, 0.0, 0, upper=2.0), Bin(">= 2", RANGE, 1, 1, 0.0, 0, lower=2.0))
    >>> char = Characteristic("x", "numeric", bins, 0.0, "", "", cuts=(2.0,))
    >>> rows = RowFacts(np.array([0, 1, 0], np.int8), np.ones(3), np.array([0, 0, 1], np.int8))
    >>> table = bin_counts(pd.DataFrame({"x": [1.0, 5.0, 3.0]}), rows, [char])[0]
    >>> table[:, 0].tolist(), table[:, 1].tolist()
    ([[1.0, 0.0], [0.0, 1.0]], [[0.0, 0.0], [1.0, 0.0]])
    """
    counted = _sample_outcome_counter(rows)

    def one(char):
        return counted(bin_codes(char, frame[char.name])[0].astype(np.intp), len(char.bins))

    return _each(one, list(drafts), len(frame))


def merge_bin_counts(a: list, b: list) -> list:
    return [x + y for x, y in zip(a, b)]


# ---- every segment in one pass -----------------------------------------------------------------
# Each function below returns one result per segment, equal to the single-card pass on that
# segment's facts (``SegmentFacts.own``): the same codes are counted in the same order, and a row
# of another segment only ever added a weight of zero.

def fine_counts_by_segment(frame: pd.DataFrame, rows: SegmentFacts, layouts: dict,
                           n_segments: int) -> tuple[dict, ...]:
    """:func:`fine_counts` of every segment, each column coded once for all of them.

    The segment is one more code in the count cell, so the table of a column has a segment axis;
    the development range is each segment's own. Values far beyond the layout's bounds are
    counted over every row of the chunk, as for each segment's own pass.

    Examples
    --------
    >>> rows = SegmentFacts(np.array([0, 1, 0], np.int8), np.ones(3), np.zeros(3, np.int8),
    ...                     np.array([0, 1, 1], np.int8))
    >>> a, b = fine_counts_by_segment(pd.DataFrame({"x": [1.0, 5.0, 3.0]}), rows,
    ...                               {"x": NumericLayout(np.array([2.0]), ())}, 2)
    >>> a["x"].goods.tolist(), b["x"].goods.tolist(), b["x"].bads.tolist()
    ([1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 1.0, 0.0])
    >>> b["x"].development_range
    (3.0, 5.0)
    """
    kept = rows.sample != EXCLUDED
    weight = np.where(kept, rows.weight, 0.0)
    cell = np.where(kept, (rows.segment.astype(np.intp) * N_SAMPLES + rows.sample) * 2
                    + rows.label, 0)
    counted = _Counter(weight, cell, n_segments)
    dev = [(rows.sample == DEVELOPMENT) & (rows.segment == s) for s in range(n_segments)]

    def one(item):
        name, layout = item
        series = frame[name]
        if isinstance(layout, NumericLayout):
            return name, _numeric_fine_each(numeric_values(series, name), layout, counted, dev)
        idx = categorical_codes(series, layout)
        tables = counted(np.where(idx < 0, len(layout), idx), len(layout) + 1)
        return name, [FineCounts(t, None, len(idx)) for t in tables]

    counts = dict(_each(one, list(layouts.items()), len(frame)))
    return tuple({name: per[s] for name, per in counts.items()} for s in range(n_segments))


def merge_by_segment(merge, a: tuple, b: tuple) -> tuple:
    """Two chunks' results of every segment merged segment by segment with ``merge``."""
    return tuple(merge(x, y) for x, y in zip(a, b))


def bin_counts_by_segment(frame: pd.DataFrame, rows: SegmentFacts, drafts: tuple) -> tuple:
    """:func:`bin_counts` of each segment's own characteristics (``drafts[s]``), on its rows."""
    out = []
    for index, own in enumerate(drafts):
        if not own:
            out.append([])
            continue
        at, facts = rows.members(index)
        out.append(bin_counts(_rows_at(frame, own, at), facts, own))
    return tuple(out)


def patterns_by_segment(frame: pd.DataFrame, rows: SegmentFacts, candidates: tuple) -> tuple:
    """:func:`coded_patterns` of each segment: its rows coded by its own candidates only."""
    out = []
    for index, own in enumerate(candidates):
        at, facts = rows.members(index)
        out.append(coded_patterns(_rows_at(frame, own, at), facts, own))
    return tuple(out)


def merge_patterns_by_segment(radices: tuple, a: tuple, b: tuple) -> tuple:
    return tuple(merge_patterns(x, y, radix) for x, y, radix in zip(a, b, radices))


def _rows_at(frame: pd.DataFrame, drafts, at: np.ndarray) -> pd.DataFrame:
    # Only the columns the segment's characteristics read, and only its rows: each row is
    # coded once, by its own segment's bins.
    return frame[[c.name for c in drafts]].take(at)


def scores_by_segment(frame: pd.DataFrame, rows: SegmentFacts, cards: tuple) -> tuple:
    """Each row's score and refusal under its own segment's card (``cards[s]``, None for a
    segment that asks no score); rows of no segment score 0."""
    score = np.zeros(len(frame), np.int64)
    refused = np.zeros(len(frame), bool)
    for index, card in enumerate(cards):
        if card is None:
            continue
        at = np.flatnonzero(rows.segment == index)
        if len(at):
            scored = apply_scorecard(card, frame[list(card.names)].take(at))
            score[at], refused[at] = scored.score, scored.rejected
    return score, refused


def merge_scores(a: tuple, b: tuple) -> tuple:
    """Per-row arrays of two neighbouring chunks, the earlier first."""
    return tuple(np.concatenate([x, y]) for x, y in zip(a, b))
