"""Fine classes: the many small classes that coarse classing later merges.

A numeric column is first cut on a grid of round candidate values between its smallest and
largest value (two significant figures on a log scale, plus an even step), and counted per grid
cell. Fine classes are then runs of cells holding about equal shares of the rows, so they are
quantile classes at grid resolution. The grid depends only on the column's minimum and maximum,
which any engine can merge exactly, so every engine gets the same classes from the same data.

Finding the grid cell of a million values is the costliest step of the fine classing, so
:func:`grid_cells` replaces the binary search by a table lookup on the bits of each value.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from scorecard.data.coding import grid_coder

GRID_STEPS = 256        # even-step candidates across the range
# Twelve decades of two-figure candidates below the largest magnitude keep ordinary values
# finely cut even when one typed-in value is a million times larger than the rest.
LOG_DECADES = 12


def _round_values(values: np.ndarray, digits: int) -> np.ndarray:
    # Printing and re-reading gives the double nearest to the decimal, so labels stay clean.
    return np.array([float(f"{v:.{digits}g}") for v in values])


def candidate_cuts(minimum: float, maximum: float) -> np.ndarray:
    """Round candidate cut values strictly inside (minimum, maximum].

    Examples
    --------
    >>> c = candidate_cuts(0, 1)
    >>> bool(c[0] > 0), float(c[-1]), bool(np.all(np.diff(c) > 0))
    (True, 1.0, True)
    """
    if not (np.isfinite(minimum) and np.isfinite(maximum)) or maximum <= minimum:
        return np.empty(0)
    top = math.floor(math.log10(max(abs(minimum), abs(maximum))))
    mantissas = np.arange(10, 100) / 10.0
    magnitudes = 10.0 ** np.arange(top - LOG_DECADES, top + 1)
    with np.errstate(over="ignore"):    # near the largest double some candidates are infinite
        log = _round_values(np.outer(magnitudes, mantissas).ravel(), 2)
    grid = np.unique(np.concatenate([_even_values(minimum, maximum), log, -log, [0.0]]))
    return grid[(grid > minimum) & (grid <= maximum)]


def _even_values(minimum: float, maximum: float) -> np.ndarray:
    """Multiples of a round step (1, 2 or 5 times a power of ten) across the range."""
    span = maximum - minimum
    # A span that overflows, or is too small to divide, has no even step worth a cut.
    if not (math.isfinite(span) and span / GRID_STEPS > 0):
        return np.empty(0)
    step = 10.0 ** math.floor(math.log10(span / GRID_STEPS))
    if step == 0:
        return np.empty(0)
    for nice in (1.0, 2.0, 5.0):
        if span / (step * nice) <= GRID_STEPS * 2:
            step *= nice
            break
    first = math.floor(minimum / step) + 1
    count = int(math.floor(maximum / step)) - first + 1
    return _round_values((first + np.arange(max(count, 0))) * step, 12)


# ---- the bulk of a column, and values far beyond it ---------------------------------------------
#
# Each regular value falls in one bucket of its sign and binary exponent; counts per bucket merge
# exactly across chunks, like the minimum and maximum, so every engine finds the same bulk.
_EXPONENTS = 2048                   # biased exponents of a double (finite: 0 to 2046)
ZERO_BUCKET = _EXPONENTS                  # the bucket of the zeros; negative values sit below it
N_MAGNITUDES = 2 * _EXPONENTS + 1
_EXPONENT_SHIFT = 52
# A few values at least this many binary orders (about six decades) beyond the largest
# magnitude of the rest are extreme: they would otherwise squeeze the grid of candidate cuts.
EXTREME_GAP = 20
EXTREME_SHARE = 0.01                # at most this share of a column's values is set apart ...
EXTREME_AT_LEAST = 2                # ... or this many values, in a small table


def magnitude_counts(x: np.ndarray) -> np.ndarray:
    """Values per bucket of sign and binary exponent, in value order (finite values only).

    Zeros and the subnormal numbers share the middle bucket.

    Examples
    --------
    >>> c = magnitude_counts(np.array([-3.0, 0.0, 0.5, 0.75, 1e308, np.nan, np.inf]))
    >>> int(c.sum()), int(c[ZERO_BUCKET]), int(np.count_nonzero(c))
    (5, 1, 4)
    """
    # The top twelve bits of a double are its sign and biased exponent: one shift gives the
    # bucket, in the order positive 0..2047, then negative 0..2047 (2047: NaN and infinities).
    bits = np.ascontiguousarray(x, dtype=np.float64).view(np.uint64)
    raw = np.bincount((bits >> np.uint64(_EXPONENT_SHIFT)).astype(np.intp),
                      minlength=2 * _EXPONENTS)
    positive, negative = raw[:_EXPONENTS - 1], raw[_EXPONENTS:2 * _EXPONENTS - 1]
    counts = np.zeros(N_MAGNITUDES, dtype=np.int64)
    counts[ZERO_BUCKET:ZERO_BUCKET + _EXPONENTS - 1] = positive
    counts[ZERO_BUCKET - _EXPONENTS + 2:ZERO_BUCKET + 1] += negative[::-1]
    return counts


def _value_edges(key: int) -> tuple[float, float]:
    """Lowest and highest value a bucket can hold (edges included)."""
    exponent = abs(key - ZERO_BUCKET)
    low = 0.0 if exponent == 0 else math.ldexp(1.0, exponent - 1023)
    high = math.ldexp(1.0, exponent - 1022) if exponent < 2046 else math.inf
    if key == ZERO_BUCKET:
        return -high, high
    return (low, high) if key > ZERO_BUCKET else (-high, -low)


class Bulk(NamedTuple):
    """Where a numeric column's bulk lies, and beyond what its few extreme values start.

    ``low`` and ``high`` bound the grid of candidate cuts; values below ``below`` or above
    ``above`` are extreme (the bounds are infinite when there are none).
    """

    low: float
    high: float
    below: float = -math.inf
    above: float = math.inf


def _core_magnitude(occupied: np.ndarray, counts: np.ndarray, limit: int) -> int:
    """Largest magnitude among the buckets left when ``limit`` values go from either end."""
    cum = np.cumsum(counts[occupied])
    total = int(cum[-1])
    first = int(np.searchsorted(cum, limit, side="right"))      # first bucket not wholly cut
    last = int(np.searchsorted(cum, total - limit, side="left"))
    first, last = min(first, len(occupied) - 1), max(last, 0)
    ends = occupied[[first, last]] if first <= last else occupied[[last, first]]
    return max(abs(int(k) - ZERO_BUCKET) for k in ends)


def _tail(keys, counts: np.ndarray, limit: int, past: int, sign: int) -> int:
    """How many buckets at one end (``keys`` from that end inward) hold extreme values."""
    taken = size = 0
    for key in keys:
        key = int(key)
        taken += int(counts[key])
        if (key - ZERO_BUCKET) * sign <= 0 or abs(key - ZERO_BUCKET) < past or taken > limit:
            break
        size += 1
    return size


def bulk_of(counts: np.ndarray, minimum: float, maximum: float) -> Bulk:
    """The bulk of a column from its :func:`magnitude_counts` and exact minimum and maximum.

    A few values at either end (together at most ``EXTREME_SHARE`` of them, or
    ``EXTREME_AT_LEAST``) whose magnitude is ``EXTREME_GAP`` binary orders beyond the largest
    of the rest are extreme: the grid then covers the rest only, and the extreme values fall
    in the end classes. The grid's bounds are the edges of the buckets (powers of two), so they
    may reach a little past the bulk's values; the cells out there stay empty.

    Examples
    --------
    >>> x = np.concatenate([np.linspace(0.5, 1, 200), [1e308, -1e308]])
    >>> bulk = bulk_of(magnitude_counts(x), x.min(), x.max())
    >>> (bulk.low, bulk.high), bulk.above < 1e308, bulk.below > -1e308
    ((0.5, 2.0), True, True)
    >>> bulk_of(magnitude_counts(np.arange(10.0)), 0.0, 9.0)
    Bulk(low=0.0, high=9.0, below=-inf, above=inf)
    """
    minimum, maximum = float(minimum), float(maximum)
    occupied = np.flatnonzero(counts)
    if not len(occupied) or not (math.isfinite(minimum) and math.isfinite(maximum)):
        return Bulk(minimum, maximum)
    limit = max(EXTREME_AT_LEAST, int(EXTREME_SHARE * counts.sum()))
    core = _core_magnitude(occupied, counts, limit)
    if core == 0:
        # Nearly all zeros: the scale is that of the smallest value that is not zero.
        nonzero = [abs(int(k) - ZERO_BUCKET) for k in occupied if k != ZERO_BUCKET]
        if not nonzero:
            return Bulk(minimum, maximum)
        core = min(nonzero)
    past = core + EXTREME_GAP
    high_tail = _tail(occupied[::-1], counts, limit, past, 1)
    low_tail = _tail(occupied, counts, limit, past, -1)
    low, high, below, above = minimum, maximum, -math.inf, math.inf
    if low_tail:
        below = _value_edges(int(occupied[low_tail]))[0]
        low = max(minimum, below)
    if high_tail:
        above = _value_edges(int(occupied[-high_tail - 1]))[1]
        high = min(maximum, above)
    return Bulk(low, high, below, above)


class NumericSummary(NamedTuple):
    """What the summary pass keeps of a numeric column: exact range and magnitude counts."""

    low: float
    high: float
    magnitudes: np.ndarray

    def merged(self, other: "NumericSummary") -> "NumericSummary":
        """The summary of both chunks: exact whatever the order or the cut of the rows."""
        return NumericSummary(float(np.fmin(self.low, other.low)),
                              float(np.fmax(self.high, other.high)),
                              self.magnitudes + other.magnitudes)

    def bulk(self) -> Bulk:
        return bulk_of(self.magnitudes, self.low, self.high)


def numeric_summary(x: np.ndarray, sentinels) -> NumericSummary:
    """Range and :func:`magnitude_counts` of the regular values (neither missing nor special).

    Examples
    --------
    >>> s = numeric_summary(np.array([3.0, -999.0, np.nan, 7.0]), (-999.0,))
    >>> s.low, s.high, int(s.magnitudes.sum())
    (3.0, 7.0, 2)
    """
    # A block of rows at a time, whose temporaries stay in the cache; blocks merge exactly.
    summary = _block_summary(x[:_SUMMARY_ROWS], sentinels)
    for start in range(_SUMMARY_ROWS, len(x), _SUMMARY_ROWS):
        summary = summary.merged(_block_summary(x[start:start + _SUMMARY_ROWS], sentinels))
    return summary


_SUMMARY_ROWS = 1 << 15


def _block_summary(x: np.ndarray, sentinels) -> NumericSummary:
    low, high = regular_range(x, sentinels)
    counts = magnitude_counts(x)
    for value in sentinels:
        # Special values stand for facts, not magnitudes: taken out of their bucket again.
        counts -= magnitude_counts(np.array([value])) * int(np.count_nonzero(x == value))
    return NumericSummary(low, high, counts)


class NumericLayout(NamedTuple):
    """Code layout of a numeric column: grid cells, then missing, then each sentinel.

    ``extreme`` holds the bounds beyond which values count as extreme (reported by row).
    """

    cuts: np.ndarray
    sentinels: tuple[float, ...]
    extreme: tuple[float, float] = (-math.inf, math.inf)

    @property
    def n_cells(self) -> int:
        return len(self.cuts) + 1

    @property
    def missing_code(self) -> int:
        return self.n_cells

    @property
    def n_codes(self) -> int:
        return self.n_cells + 1 + len(self.sentinels)


def numeric_codes(x: np.ndarray, layout: NumericLayout) -> np.ndarray:
    """Grid cell of every value; NaN to the missing code, sentinels to their own codes."""
    return numeric_coder(layout)(x)


def numeric_coder(layout: NumericLayout):
    """The function ``x -> numeric_codes(x, layout)``, its grid lookup made once: for coding a
    column a block of rows at a time.

    Examples
    --------
    >>> code = numeric_coder(NumericLayout(np.array([2.0]), (-1.0,)))
    >>> code(np.array([1.0, 3.0, np.nan, -1.0])).tolist()
    [0, 1, 2, 3]
    """
    cells = grid_coder(layout.cuts)

    def code(x: np.ndarray) -> np.ndarray:
        codes = cells(x)
        codes[np.isnan(x)] = layout.missing_code
        for i, value in enumerate(layout.sentinels):
            codes[x == value] = layout.missing_code + 1 + i
        return codes

    return code


def regular_range(x: np.ndarray, sentinels, among: np.ndarray | None = None,
                  ) -> tuple[float, float]:
    """Smallest and largest finite value that is neither missing nor a sentinel.

    ``among`` limits the search to the rows where it is true. NaN, NaN when there is none.

    Examples
    --------
    >>> regular_range(np.array([3.0, -999.0, np.nan, 7.0]), (-999.0,))
    (3.0, 7.0)
    >>> regular_range(np.array([3.0, 7.0]), (), among=np.array([False, True]))
    (7.0, 7.0)
    """
    regular = np.isfinite(x)
    for value in sentinels:
        regular &= x != value
    if among is not None:
        regular &= among
    # fmin/fmax skip NaN and run vectorised, cheaper than copying the regular values out.
    kept = np.where(regular, x, np.nan)
    low = float(np.fmin.reduce(kept)) if len(kept) else math.nan
    if math.isnan(low):
        return (math.nan, math.nan)
    return (low, float(np.fmax.reduce(kept)))


def quantile_starts(counts: np.ndarray, n_classes: int) -> np.ndarray:
    """First cell of each fine class: runs of cells with about equal shares of ``counts``.

    Empty cells never start a class, so every fine class holds rows.

    Examples
    --------
    >>> quantile_starts(np.array([5., 5, 0, 5, 5]), 2).tolist()
    [0, 3]
    """
    total = counts.sum()
    if total <= 0:
        return np.zeros(1, dtype=np.int64)
    cum = np.cumsum(counts)
    targets = total * np.arange(1, n_classes) / n_classes
    ends = np.searchsorted(cum, targets, side="left") + 1
    nonempty = np.flatnonzero(counts > 0)
    # Move each boundary forward to the next non-empty cell, so no class starts empty.
    at = np.searchsorted(nonempty, ends, side="left")
    starts = nonempty[at[at < len(nonempty)]]
    return np.unique(np.concatenate([[nonempty[0]], starts]))
