"""Value coding shared by reading, binning and scoring: level labels, numbers, grid cells.

Finding the grid cell of a million values is the costliest step of the fine classing, so
:func:`grid_cells` replaces the binary search by a table lookup on the bits of each value.
"""

from __future__ import annotations

import re
from functools import partial
from typing import NamedTuple

import numpy as np

from scorecard.errors import InputError


def level_labels(values) -> list[str]:
    """Text labels of categorical levels; whole floats print without a trailing ``.0``."""
    out = []
    for v in values:
        if isinstance(v, (float, np.floating)) and float(v).is_integer():
            v = int(v)
        out.append(str(v))
    return out


class Levels(NamedTuple):
    """A categorical column coded: its distinct level labels and each row's index among them
    (-1: missing). Scoring works on this form whatever the reader gave (pandas or Arrow)."""

    labels: list[str]
    codes: np.ndarray

    def take(self, rows) -> "Levels":
        return Levels(self.labels, self.codes[rows])


class Columns:
    """A batch of rows as prepared columns, each a float64 array (numbers) or :class:`Levels`.

    It answers what scoring asks of a DataFrame (``len``, ``columns``, ``frame[name]``), and
    ``take`` picks rows by position, so no library is needed to score a subset of rows.
    """

    def __init__(self, columns: dict, rows: int):
        self._columns, self.rows = dict(columns), rows

    @property
    def columns(self) -> tuple[str, ...]:
        return tuple(self._columns)

    def __len__(self) -> int:
        return self.rows

    def __getitem__(self, name: str):
        return self._columns[name]

    def take(self, rows: np.ndarray) -> "Columns":
        return Columns({name: c.take(rows) if isinstance(c, Levels) else c[rows]
                        for name, c in self._columns.items()}, len(rows))


def _pandas_form(column):
    """An Arrow column of a type without a fast route, as pandas (imported only then)."""
    from scorecard.data.arrow_columns import is_arrow
    return column.to_pandas() if is_arrow(column) else column


def numeric_values(column, name: str) -> np.ndarray:
    """A column as float64 with NaN for missing; InputError naming the first row that holds
    no number if it is not numeric.

    ``column`` is a pandas Series, an Arrow array or an already prepared float64 array.
    """
    if isinstance(column, np.ndarray):
        return column.astype(np.float64, copy=False)
    from scorecard.data.arrow_columns import float_values, is_arrow
    if is_arrow(column):
        x = float_values(column)
        if x is not None:
            return x
    series = _pandas_form(column)
    import pandas as pd
    if isinstance(series.dtype, pd.CategoricalDtype) or not (
            pd.api.types.is_numeric_dtype(series.dtype) or pd.api.types.is_bool_dtype(series.dtype)):
        raise InputError(f"column {name}: {_first_non_number(series)}expected numbers, found "
                         f"{series.dtype} values")
    return series.to_numpy(dtype=np.float64, na_value=np.nan)


def _first_non_number(series) -> str:
    """``'row N: 'value' is not a number; '`` for the first such row, or ''."""
    import pandas as pd
    cat = series if isinstance(series.dtype, pd.CategoricalDtype) else series.astype("category")
    levels = pd.Series(cat.cat.categories.astype(str))
    text = np.append(pd.to_numeric(levels, errors="coerce").isna().to_numpy(), False)
    codes = cat.cat.codes.to_numpy()
    found = np.flatnonzero(text[codes])          # code -1 (missing) maps to the False appended
    if not len(found):
        return ""
    at = int(found[0])
    return f"row {row_number(series, at)}: {levels[codes[at]]!r} is not a number; "


def row_number(series, position: int) -> int:
    """Data row (from 1) of a position in ``series``.

    A chunk of a frame read by :func:`read_frame` keeps the frame's integer index, so the label
    says where the row is in the whole file, not just in the chunk.
    """
    label = series.index[position]
    return int(label) + 1 if isinstance(label, (int, np.integer)) else position + 1


def level_codes(column) -> Levels:
    """The levels of a column (pandas Series, Arrow array or Levels) and each row's index.

    Examples
    --------
    >>> import pandas as pd
    >>> level_codes(pd.Series(["b", None, "a", "b"], dtype="category"))
    Levels(labels=['a', 'b'], codes=array([ 1, -1,  0,  1], dtype=int8))
    """
    if isinstance(column, Levels):
        return column
    from scorecard.data.arrow_columns import is_arrow, level_values
    if is_arrow(column):
        found = level_values(column)
        if found is not None:
            return Levels(level_labels(found[0]), found[1])
    series = _pandas_form(column)
    import pandas as pd
    cat = series if isinstance(series.dtype, pd.CategoricalDtype) else series.astype("category")
    return Levels(level_labels(cat.cat.categories), cat.cat.codes.to_numpy())


def missing_values(column) -> np.ndarray:
    """True where a column (pandas Series, Arrow array, float64 array or Levels) is missing."""
    if isinstance(column, Levels):
        return column.codes < 0
    if isinstance(column, np.ndarray):
        return np.isnan(column)
    from scorecard.data.arrow_columns import float_values, is_arrow
    if is_arrow(column):
        x = float_values(column)
        return np.isnan(x) if x is not None else level_codes(column).codes < 0
    return column.isna().to_numpy(dtype=bool)


_NUMBER = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")


def number_label(text: str) -> str | None:
    """The label a numeric-looking level gets when a reader parses it as a number; None for
    text that is not a plain decimal number.

    Examples
    --------
    >>> number_label("01"), number_label("2.50"), number_label("owner")
    ('1', '2.5', None)
    """
    return level_labels([float(text)])[0] if _NUMBER.fullmatch(text) else None


def categorical_codes(column, levels) -> np.ndarray:
    """Index of each row's level in ``levels``; -1 for missing, -2 for a level not in ``levels``.

    Levels match by text. A text that matches no level but reads as a number is looked up by
    the label of that number (``"01"`` and ``"1.0"`` find level ``"1"``): a CSV reader that
    infers types turns such a column into numbers, so the levels of a model built from it
    are number labels, while a reader that keeps text sees the digits as written. The lookup
    works on the distinct levels only, never per row. ``column`` is a pandas Series, an Arrow
    array or :class:`Levels`.

    Examples
    --------
    >>> import pandas as pd
    >>> categorical_codes(pd.Series(["b", "01", None, "z"]), ["1", "b"]).tolist()
    [1, 0, -1, -2]
    """
    coded = level_codes(column)
    index: dict = {}
    for i, level in enumerate(levels):
        index.setdefault(level, i)
    lookup = np.array([index.get(label, -1) for label in coded.labels], dtype=np.intp)
    unknown = np.flatnonzero(lookup < 0)
    if len(unknown) and index:
        lookup[unknown] = [index.get(number_label(coded.labels[i]), -1) for i in unknown]
    lookup = np.where(lookup < 0, -2, lookup)
    codes = coded.codes
    return np.where(codes < 0, -1, lookup[codes] if len(lookup) else -2)


_MAGNITUDE_BITS = np.int64(0x7FFF_FFFF_FFFF_FFFF)   # all bits of a double but the sign
_EXPONENT_BITS = np.int64(0x7FF0_0000_0000_0000)
_MAX_TABLE = 1 << 18    # entries of the bucket table of one grid (2 MB)
_MAX_STEPS = 4          # cuts allowed in one bucket before plain binary search is cheaper
_MIN_CUTS = 16          # below this many cuts, comparing with each cut in turn is cheapest


class _BucketTable(NamedTuple):
    """Lookup table from a value's bucket to the number of cuts in earlier buckets."""

    low: int            # bits of the largest power of two not above the smallest nonzero |cut|
    shift: int          # bucket width: 2**shift units in the last place
    first: int          # bucket of the first and of the last cut
    last: int
    before: np.ndarray  # cuts in buckets before each bucket, first to last
    steps: int          # most cuts in one bucket
    cuts: np.ndarray    # the cuts, then NaN: a look past the last cut is safe and never true


def _buckets(x: np.ndarray, low: int, shift: int) -> np.ndarray:
    """Bucket of every value, never decreasing as the value grows.

    The bits of a double, read as an integer, grow with its magnitude, so equal slices of those
    integers are buckets that are narrow near zero and wide for large values, like the grid.
    All magnitudes below ``low`` share bucket 0; negative values mirror the positive ones.
    """
    bits = x.view(np.int64)
    above = (bits & _MAGNITUDE_BITS) - low
    bucket = np.where(above < 0, 0, (above >> shift) + 1)
    sign = bits >> 63                 # 0 for positive values, -1 for negative ones
    return (bucket ^ sign) - sign


def _bucket_table(cuts: np.ndarray) -> _BucketTable | None:
    magnitude = cuts.view(np.int64) & _MAGNITUDE_BITS
    nonzero = magnitude[magnitude > 0]
    if not len(nonzero) or not np.isfinite(cuts).all():
        return None
    # At least 1, so that both zeros (magnitude 0) share bucket 0 even below a subnormal cut.
    low = max(int(nonzero.min() & _EXPONENT_BITS), 1)
    above = np.sort(nonzero - low)
    # A bucket no wider than the closest two cuts of one sign holds at most one cut.
    gaps = np.diff(above)
    gaps = gaps[gaps > 0]
    shift = int(np.log2(gaps.min())) if len(gaps) else 0
    while True:
        bucket = _buckets(cuts, low, shift)
        # In Python integers: the span of buckets can exceed what an int64 difference holds.
        if int(bucket[-1]) - int(bucket[0]) < _MAX_TABLE:
            break
        shift += 1
    steps = int(np.bincount(bucket - bucket[0]).max())
    if steps > _MAX_STEPS:
        return None
    first, last = int(bucket[0]), int(bucket[-1])
    before = np.searchsorted(bucket, np.arange(first, last + 1), side="left")
    return _BucketTable(low, shift, first, last, before, steps, np.append(cuts, np.nan))


def grid_cells(x: np.ndarray, cuts: np.ndarray) -> np.ndarray:
    """Number of cuts at or below each value: ``np.searchsorted(cuts, x, side='right')``.

    ``cuts`` must be sorted and distinct. Each value's bucket gives the cuts in earlier buckets
    from a table; the few cuts in its own bucket are then compared one by one. A bucket never
    mixes values on both sides of a cut it does not hold, so the count is exact. NaN gets some
    cell; callers give missing values their own code.

    Examples
    --------
    >>> cuts = np.linspace(-5, 5, 41)
    >>> x = np.array([-np.inf, -5.0, -0.0, 0.1, 5.0, 7.0])
    >>> grid_cells(x, cuts).tolist() == np.searchsorted(cuts, x, side="right").tolist()
    True
    """
    return grid_coder(cuts)(np.asarray(x, dtype=np.float64))


def grid_coder(cuts: np.ndarray):
    """The function ``x -> grid_cells(x, cuts)``, its lookup table made once: for coding a
    column a block of rows at a time.

    Examples
    --------
    >>> grid_coder([1.0, 2.0])(np.array([0.5, 1.0, 3.0])).tolist()
    [0, 1, 2]
    """
    cuts = np.asarray(cuts, dtype=np.float64)
    if len(cuts) < _MIN_CUTS:
        return partial(_compared, cuts)
    table = _bucket_table(cuts)
    if table is None:
        return partial(np.searchsorted, cuts, side="right")
    return partial(_looked_up, table)


def _compared(cuts: np.ndarray, x: np.ndarray) -> np.ndarray:
    # A few vectorised comparisons beat binary search, whose branches the processor cannot
    # predict: about ten times faster for the handful of cuts of a coarse classing.
    cells = np.zeros(len(x), dtype=np.intp)
    for cut in cuts:
        cells += x >= cut
    return cells


def _looked_up(table: _BucketTable, x: np.ndarray) -> np.ndarray:
    bucket = _buckets(x, table.low, table.shift)
    np.clip(bucket, table.first, table.last, out=bucket)
    bucket -= table.first
    cells = table.before[bucket]
    for _ in range(table.steps):
        cells += x >= table.cuts[cells]
    return cells
