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

from scorecard.data.coding import grid_cells

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


class NumericLayout(NamedTuple):
    """Code layout of a numeric column: grid cells, then missing, then each sentinel."""

    cuts: np.ndarray
    sentinels: tuple[float, ...]

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
    codes = grid_cells(x, layout.cuts)
    codes[np.isnan(x)] = layout.missing_code
    for i, value in enumerate(layout.sentinels):
        codes[x == value] = layout.missing_code + 1 + i
    return codes


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
