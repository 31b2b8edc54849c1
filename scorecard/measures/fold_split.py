"""Counts dealt into folds, cell by cell, so that a few changed rows move only their own cells.

Rows that share a cell (a pattern of bin codes, or a fine class, on one side of the outcome)
are exchangeable, so dealing each cell's count into ``k`` folds by a multinomial draw is a
random split of the rows into ``k`` folds, made on counts alone. Here every cell draws its
parts from uniforms hashed from its own key (its codes and the seed) rather than from one
shared stream of random numbers: the split of a cell does not depend on which other cells
exist, or in what order, so adding, removing or moving a few rows changes only the parts of
the cells they touch. A shared stream would shift every later cell's draw instead, and with
it every held-out figure computed from the folds.

The multinomial is drawn as a chain of binomials (the first fold takes
``Binomial(n, 1/k)``, the next ``Binomial(rest, 1/(k-1))``, and so on), each by the inverse of
its distribution function at a hashed uniform.
"""

from __future__ import annotations

import numpy as np
from scipy import special

_GOLDEN = np.uint64(0x9E3779B97F4A7C15)
_MIX_1 = np.uint64(0xBF58476D1CE4E5B9)
_MIX_2 = np.uint64(0x94D049BB133111EB)


def _mix(x: np.ndarray) -> np.ndarray:
    # The finaliser of splitmix64: a bijection of 64-bit words whose output bits each depend
    # on every input bit, so nearby keys give unrelated uniforms.
    x = (x ^ (x >> np.uint64(30))) * _MIX_1
    x = (x ^ (x >> np.uint64(27))) * _MIX_2
    return x ^ (x >> np.uint64(31))


def cell_keys(codes, seed: int, side: int = 0) -> np.ndarray:
    """A 64-bit key per row of ``codes`` (shape ``(n,)`` or ``(n, m)`` of non-negative
    integers), which depends only on that row's codes, on ``seed`` and on ``side`` (such as
    0 for the goods and 1 for the bads of the same codes).

    Examples
    --------
    >>> keys = cell_keys(np.array([[0, 1], [2, 0], [0, 1]]), seed=7)
    >>> bool(keys[0] == keys[2]), bool(keys[0] == keys[1])
    (True, False)
    """
    codes = np.asarray(codes)
    codes = codes.reshape(len(codes), -1)
    start = _mix(_mix(np.array([seed], dtype=np.uint64) + _GOLDEN) ^ np.uint64(side))
    keys = np.repeat(start, len(codes))
    for column in range(codes.shape[1]):
        keys = _mix(keys ^ (codes[:, column].astype(np.uint64) + _GOLDEN))
    return keys


def _uniforms(keys: np.ndarray, draw) -> np.ndarray:
    """The ``draw``-th uniform on [0, 1) of each key (53 random bits); ``draw`` is a whole
    number or an array of them, one per key."""
    draw = np.asarray(draw, dtype=np.uint64)
    with np.errstate(over="ignore"):  # wrapping round 2**64 is intended
        bits = _mix(keys + _GOLDEN * (draw + np.uint64(1)))
    return (bits >> np.uint64(11)).astype(float) * 2.0 ** -53


# Cells of up to this many rows are dealt row by row, each row to a fold of its own uniform:
# exact, and at most one uniform per row, made a block of rows at a time to bound memory.
# Larger cells (at most rows / 5,000 of them) take a chain of binomial draws instead, whose
# root finder costs tens of microseconds a draw.
_ROW_BY_ROW = 5_000
_BLOCK_ROWS = 1 << 20


def _binomial_quantile(u: np.ndarray, n: np.ndarray, p: float) -> np.ndarray:
    """The least ``x`` with ``P(Binomial(n, p) <= x) >= u``, for whole ``n >= 0``, p < 1."""
    with np.errstate(invalid="ignore"):
        guess = np.ceil(special.bdtrik(u, n, p))
    guess = np.clip(np.nan_to_num(guess, nan=0.0), 0.0, n)
    # The root finder lands within one of the answer; step to the least x that reaches u.
    whole_n = n.astype(np.int64)
    below = np.maximum(guess - 1.0, 0.0)
    guess = np.where(special.bdtr(below.astype(np.int64), whole_n, p) >= u, below, guess)
    short = (special.bdtr(guess.astype(np.int64), whole_n, p) < u) & (guess < n)
    return guess + short


def _distinct(keys: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """``keys`` with every repeat of a key replaced by a key of its own.

    Entries that share a key (the same codes listed twice, such as rows not yet grouped into
    patterns) must not share their draws, or all their rows would land in the same fold. The
    repeats of a key are numbered in the order of their counts, so the result does not depend
    on the order of the entries: repeats with equal counts are interchangeable.
    """
    order = np.lexsort((counts, keys))
    ranked = keys[order]
    first = np.ones(len(keys), dtype=bool)
    first[1:] = ranked[1:] != ranked[:-1]
    if first.all():
        return keys
    place = np.arange(len(keys))
    repeat = (place - np.maximum.accumulate(np.where(first, place, 0))).astype(np.uint64)
    distinct = np.empty_like(keys)
    distinct[order] = np.where(first, ranked, _mix(ranked ^ _mix(repeat + _GOLDEN)))
    return distinct


def split_counts(counts, keys, folds: int) -> np.ndarray:
    """Each count dealt into ``folds`` parts, shape ``(folds, n)``, summing to the count.

    The whole part of a count is dealt as rows dealt at random into equally likely folds
    would be; a fractional remainder (weighted rows) goes whole to one fold. Every draw comes
    from the cell's own ``keys`` entry (see :func:`cell_keys`), so equal keys and counts give
    equal parts wherever the cell stands. Entries that share a key are dealt apart, each with
    draws of its own.

    Examples
    --------
    >>> counts = np.array([10.0, 2.5, 0.0])
    >>> parts = split_counts(counts, cell_keys(np.arange(3), seed=0), 3)
    >>> parts.sum(axis=0).tolist()
    [10.0, 2.5, 0.0]
    """
    counts = np.asarray(counts, dtype=float)
    keys = np.asarray(keys, dtype=np.uint64)
    if counts.shape != keys.shape:
        raise ValueError(f"counts and keys: shapes {counts.shape} and {keys.shape} differ")
    keys = _distinct(keys, counts)
    cells = len(counts)
    whole = np.floor(counts)
    parts = np.zeros((folds, cells))

    small = np.flatnonzero((whole > 0) & (whole <= _ROW_BY_ROW))
    ends = np.cumsum(whole[small].astype(np.int64))
    cuts = np.searchsorted(ends, np.arange(_BLOCK_ROWS, ends[-1] if len(ends) else 0,
                                           _BLOCK_ROWS), side="right")
    for block in np.split(small, cuts):
        rows = whole[block].astype(np.int64)
        cell = np.repeat(block, rows)
        # Each row's number within its cell: 0, 1, ... restarting at every cell.
        within = np.arange(len(cell)) - np.repeat(np.cumsum(rows) - rows, rows)
        fold = np.minimum((_uniforms(keys[cell], within) * folds).astype(np.int64), folds - 1)
        parts += np.bincount(fold * cells + cell, minlength=folds * cells).reshape(folds, cells)

    large = np.flatnonzero(whole > _ROW_BY_ROW)
    rest = whole[large]
    for part in range(folds - 1):
        draw = _uniforms(keys[large], _ROW_BY_ROW + part)
        parts[part, large] = _binomial_quantile(draw, rest, 1.0 / (folds - part))
        rest = rest - parts[part, large]
    parts[folds - 1, large] = rest

    remainder = counts - whole
    if remainder.any():
        home = np.minimum((_uniforms(keys, _ROW_BY_ROW + folds) * folds).astype(np.int64),
                          folds - 1)
        parts[home, np.arange(cells)] += remainder
    return parts
