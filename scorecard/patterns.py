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


class Patterns(NamedTuple):
    """Distinct rows of a code matrix with the summed weights of the rows behind each."""

    codes: np.ndarray      # (patterns, columns)
    weights: np.ndarray    # (patterns, len(weights))


def pattern_index(codes: np.ndarray, radix) -> np.ndarray:
    """Index of each row's pattern, numbered in order of first appearance.

    Columns are packed into 64-bit keys by mixed radix while the key fits, and the packed keys
    are hashed with ``pandas.factorize``, so the cost grows linearly with the rows.

    Examples
    --------
    >>> pattern_index(np.array([[1, 0], [0, 1], [1, 0]]), [2, 2]).tolist()
    [0, 1, 0]
    """
    n = len(codes)
    index = np.zeros(n, dtype=np.int64)
    span = 1
    for j, r in enumerate(radix):
        r = max(int(r), 1)
        if span * r >= _KEY_LIMIT:
            index = pd.factorize(index)[0].astype(np.int64)
            span = int(index.max()) + 1 if n else 1
        index = index * r + codes[:, j]
        span *= r
    return pd.factorize(index)[0].astype(np.int64) if n else index


def distinct_patterns(codes: np.ndarray, radix, weights) -> Patterns:
    """Distinct rows of ``codes`` and the sums of each weight array over the rows of each.

    Examples
    --------
    >>> p = distinct_patterns(np.array([[1, 0], [0, 1], [1, 0]]), [2, 2], [np.array([1., 2., 3.])])
    >>> p.codes.tolist(), p.weights.ravel().tolist()
    ([[1, 0], [0, 1]], [4.0, 2.0])
    """
    index = pattern_index(codes, radix)
    count = int(index.max()) + 1 if len(index) else 0
    # factorize numbers patterns by first appearance, so a new running maximum marks a first row.
    first = np.flatnonzero(np.diff(np.maximum.accumulate(index), prepend=-1) > 0)
    sums = np.column_stack([np.bincount(index, weights=w, minlength=count) for w in weights]) \
        if weights else np.empty((count, 0))
    return Patterns(codes[first], sums)
