"""Columns held as small integer codes with one value per code.

A weight-of-evidence coded characteristic takes one value per bin, so a design of such columns
is kept as the bin code of every row plus each column's short table of values: a quarter of
the memory of the float matrix. Rows that share the codes of some columns form groups, and a
logistic model on those columns is fitted exactly on one design row per group. Float blocks of
the design are made on demand, a few thousand rows at a time, so the whole float matrix is
never held.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from scorecard.engines.patterns import (
    distinct_count,
    factorize,
    first_rows,
    pattern_index,
)

BLOCK_ROWS = 1 << 15


class Groups(NamedTuple):
    """Rows grouped by their codes on ``columns``, groups numbered by first appearance.

    Attributes
    ----------
    columns : tuple of int
    index : ndarray of shape (n,)
        Group of each row.
    first : ndarray of shape (groups,)
        First row of each group; its codes are the group's codes.
    """

    columns: tuple[int, ...]
    index: np.ndarray
    first: np.ndarray

    @property
    def count(self) -> int:
        return len(self.first)


class CodedColumns:
    """A design of ``k`` columns as an ``(n, k)`` array of codes and a value table per column.

    Parameters
    ----------
    codes : array_like of int, shape (n, k)
        Code of each row in each column; column ``j``'s codes index ``values[j]``.
    values : sequence of k 1-d float arrays

    Examples
    --------
    >>> coded = CodedColumns([[0, 1], [1, 1], [1, 0]], [np.array([-0.5, 0.5]), np.array([2.0, 3.0])])
    >>> next(coded.blocks([1, 0]))[2].tolist()
    [[3.0, -0.5], [3.0, 0.5], [2.0, 0.5]]
    >>> coded.group([0]).index.tolist()
    [0, 1, 1]
    """

    def __init__(self, codes, values):
        codes = np.asarray(codes)
        if codes.ndim != 2 or not np.issubdtype(codes.dtype, np.integer):
            raise ValueError("codes must be a 2-d integer array")
        if len(values) != codes.shape[1]:
            raise ValueError(f"expected {codes.shape[1]} value tables, got {len(values)}")
        # Column-major, so that each column's codes are read contiguously.
        self.codes = np.asfortranarray(codes)
        self.values = tuple(np.asarray(v, dtype=float) for v in values)
        self.radix = tuple(len(v) for v in self.values)

    @property
    def n_rows(self) -> int:
        return self.codes.shape[0]

    @property
    def n_columns(self) -> int:
        return self.codes.shape[1]

    def rows(self, mask) -> CodedColumns:
        """The rows where ``mask`` is true."""
        return CodedColumns(self.codes[mask], self.values)

    def blocks(self, columns):
        """Yield ``(start, stop, block)``: the float values of ``columns`` for rows start:stop.

        The block is a reused buffer: it is valid until the next one is yielded.
        """
        columns = list(columns)
        buffer = np.empty((min(BLOCK_ROWS, self.n_rows), len(columns)), order="F")
        for start in range(0, self.n_rows, BLOCK_ROWS):
            stop = min(start + BLOCK_ROWS, self.n_rows)
            block = buffer[: stop - start]
            for i, j in enumerate(columns):
                np.take(self.values[j], self.codes[start:stop, j], out=block[:, i])
            yield start, stop, block

    def column_sums(self, weights) -> list[np.ndarray]:
        """Per column, the summed ``weights`` of the rows holding each code."""
        return [np.bincount(self.codes[:, j], weights=weights, minlength=r)
                for j, r in enumerate(self.radix)]

    def group(self, columns) -> Groups:
        """The rows grouped by their codes on ``columns`` (one group when there are none)."""
        columns = tuple(columns)
        if not columns:
            index = np.zeros(self.n_rows, dtype=np.int64)
        else:
            index = pattern_index(self.codes[:, list(columns)], [self.radix[j] for j in columns])
        return Groups(columns, index, first_rows(index))

    def refine(self, groups: Groups, column: int, at_most: int | None = None) -> Groups | None:
        """``groups`` split further by the codes of one more column.

        With ``at_most``: None instead, when the split would make more groups than that (found
        by a count of the distinct keys, which costs far less than numbering them).
        """
        span = groups.count * self.radix[column]
        keys = groups.index * self.radix[column] + self.codes[:, column]
        if at_most is not None and at_most < span <= 8 * max(self.n_rows, 1) \
                and distinct_count(keys, span) > at_most:
            return None
        index = factorize(keys, span)
        return Groups(groups.columns + (column,), index, first_rows(index))

    def group_values(self, groups: Groups, out: np.ndarray | None = None) -> np.ndarray:
        """The values of each group on its columns, shape (groups, len(columns)).

        ``out``, when given, receives them (a slice of a larger design, say).
        """
        if out is None:
            out = np.empty((groups.count, len(groups.columns)))
        for i, j in enumerate(groups.columns):
            out[:, i] = self.values[j][self.codes[groups.first, j]]
        return out


def code_columns(X: np.ndarray) -> CodedColumns:
    """A float design coded exactly: each column's distinct values become its value table.

    Examples
    --------
    >>> coded = code_columns(np.array([[0.5, 2.0], [0.5, 1.0]]))
    >>> coded.codes.tolist(), [v.tolist() for v in coded.values]
    ([[0, 1], [0, 0]], [[0.5], [1.0, 2.0]])
    """
    X = np.asarray(X, dtype=float)
    codes = np.empty(X.shape, dtype=np.int64)
    values = []
    for j in range(X.shape[1]):
        distinct, codes[:, j] = np.unique(X[:, j], return_inverse=True)
        values.append(distinct)
    return CodedColumns(codes, values)
