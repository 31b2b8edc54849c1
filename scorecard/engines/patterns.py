"""Counts per distinct pattern of bin codes.

Logistic regression on weight-of-evidence coded data depends on the rows only through the
counts of goods and bads per distinct combination of bins, so the fit, the selection and the
score histograms all run on this small table instead of on the rows.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

_KEY_LIMIT = 1 << 62
_BLOCK_ROWS = 1 << 15
# An odd 64-bit constant (the golden ratio's fraction) that spreads one packed key over the
# bits of the next when several keys are folded into one hash.
_MIX = np.uint64(0x9E3779B97F4A7C15)


class Patterns(NamedTuple):
    """Distinct rows of a code matrix with the summed weights of the rows behind each."""

    codes: np.ndarray      # (patterns, columns)
    weights: np.ndarray    # (patterns, len(weights))


# A key range from which numbering by direct addressing beats hashing: below it a hash table
# stays in the cache; above the number of keys, the tables of the range cost more than the keys.
_DIRECT_SPAN = 1 << 12


def factorize(keys: np.ndarray, span: int | None = None) -> np.ndarray:
    """Number the distinct keys by first appearance.

    ``span``, when given, bounds the keys: every key is in ``range(span)``. A span no larger
    than the number of keys is numbered by direct addressing (the first row of each key
    value, then a running count of first rows), with no hashing; the numbers are the same.

    Examples
    --------
    >>> factorize(np.array([7, 3, 7, 0])).tolist()
    [0, 1, 0, 2]
    >>> factorize(np.array([7, 3, 7, 0] * 1100), span=8)[:4].tolist()
    [0, 1, 0, 2]
    """
    n = len(keys)
    if span is None or not _DIRECT_SPAN <= span <= n:
        return pd.factorize(keys)[0].astype(np.int64, copy=False)
    first = np.full(span, n, dtype=np.int64)
    np.minimum.at(first, keys, np.arange(n, dtype=np.int64))
    present = np.flatnonzero(first < n)
    starts = np.zeros(n, dtype=bool)
    starts[first[present]] = True
    number = np.empty(span, dtype=np.int64)
    number[present] = np.cumsum(starts)[first[present]] - 1
    return number[keys]


def distinct_count(keys: np.ndarray, span: int) -> int:
    """How many distinct values the keys take, every key being in ``range(span)``."""
    seen = np.zeros(span, dtype=bool)
    seen[keys] = True
    return int(np.count_nonzero(seen))


def _packed_keys(codes: np.ndarray, radix) -> list[np.ndarray]:
    """The columns packed by mixed radix into as few exact 64-bit keys as hold them."""
    groups, group, span = [], [], 1
    for j, r in enumerate(radix):
        r = max(int(r), 1)
        if group and span * r >= _KEY_LIMIT:
            groups.append(group)
            group, span = [], 1
        group.append((j, r))
        span *= r
    groups.append(group)
    keys = [np.empty(len(codes), dtype=np.int64) for _ in groups]
    # Row blocks keep the slice of the row-major code matrix in cache while its columns are read.
    for start in range(0, len(codes), _BLOCK_ROWS):
        block = codes[start:start + _BLOCK_ROWS]
        for key, group in zip(keys, groups):
            packed = np.zeros(len(block), dtype=np.int64)
            for j, r in group:
                packed *= r
                packed += block[:, j]
            key[start:start + _BLOCK_ROWS] = packed
    return keys


def first_rows(index: np.ndarray) -> np.ndarray:
    """First row of each group of an index numbered by first appearance (as :func:`factorize`)."""
    # Numbering by first appearance makes each new running maximum a first row.
    return np.flatnonzero(np.diff(np.maximum.accumulate(index), prepend=-1) > 0)


def _chained_index(codes: np.ndarray, radix) -> np.ndarray:
    """Exact index without hashing: factorize whenever the packed key would overflow."""
    n = len(codes)
    index = np.zeros(n, dtype=np.int64)
    span = 1
    for j, r in enumerate(radix):
        r = max(int(r), 1)
        if span * r >= _KEY_LIMIT:
            index = factorize(index)
            span = int(index.max()) + 1
        index = index * r + codes[:, j]
        span *= r
    return factorize(index)


def pattern_index(codes: np.ndarray, radix) -> np.ndarray:
    """Index of each row's pattern, numbered in order of first appearance.

    Columns are packed into 64-bit keys by mixed radix. When one key holds them all it is
    hashed with ``pandas.factorize``; otherwise the keys are folded into one 64-bit hash, and
    the result is checked against every key, falling back to an exact chain of factorizations
    if two patterns ever share a hash. Either way the cost grows linearly with the rows.

    Examples
    --------
    >>> pattern_index(np.array([[1, 0], [0, 1], [1, 0]]), [2, 2]).tolist()
    [0, 1, 0]
    """
    if len(codes) == 0:
        return np.zeros(0, dtype=np.int64)
    keys = _packed_keys(codes, radix)
    if len(keys) == 1:
        return factorize(keys[0])
    folded = keys[0].astype(np.uint64)
    for key in keys[1:]:
        folded = folded * _MIX + key.astype(np.uint64)
    index = factorize(folded.view(np.int64))
    first = first_rows(index)
    if all(np.array_equal(key[first][index], key) for key in keys):
        return index
    return _chained_index(codes, radix)


def distinct_patterns(codes: np.ndarray, radix, weights) -> Patterns:
    """Distinct rows of ``codes`` and the sums of each weight array over the rows of each.

    Patterns keep the order of their first row. When every row is already distinct the
    codes come back as they are, without a copy.

    Examples
    --------
    >>> p = distinct_patterns(np.array([[1, 0], [0, 1], [1, 0]]), [2, 2], [np.array([1., 2., 3.])])
    >>> p.codes.tolist(), p.weights.ravel().tolist()
    ([[1, 0], [0, 1]], [4.0, 2.0])
    """
    index = pattern_index(codes, radix)
    count = int(index.max()) + 1 if len(index) else 0
    if count == len(index):
        sums = np.column_stack([np.asarray(w, dtype=np.float64) for w in weights]) \
            if weights else np.empty((count, 0))
        return Patterns(codes, sums)
    sums = np.column_stack([np.bincount(index, weights=w, minlength=count) for w in weights]) \
        if weights else np.empty((count, 0))
    return Patterns(codes.take(first_rows(index), axis=0), sums)


def merge_distinct(a: Patterns, b: Patterns, radix) -> Patterns:
    """One pattern table from two, ``a``'s patterns first; the weights of shared patterns add.

    Examples
    --------
    >>> a = Patterns(np.array([[1, 0]]), np.array([[2.0]]))
    >>> b = Patterns(np.array([[0, 1], [1, 0]]), np.array([[1.0], [3.0]]))
    >>> m = merge_distinct(a, b, [2, 2])
    >>> m.codes.tolist(), m.weights.ravel().tolist()
    ([[1, 0], [0, 1]], [5.0, 1.0])
    """
    codes = np.concatenate([a.codes, b.codes])
    weights = np.concatenate([a.weights, b.weights])
    return distinct_patterns(codes, radix, list(weights.T))
