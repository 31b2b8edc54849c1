"""One scoring pass over rows, kept as counts per group: by score and by attribute.

``scorecard compare`` counts a whole file as one group; ``scorecard monitor`` counts a file by
period. Both go through :func:`count_groups`, so an index computed on one period's counts is the
index of that period's rows alone. Counts of chunks add up (:func:`merge_group_counts`), so a
file can be counted chunk by chunk, on one machine or on the partitions of a Dask dataframe.

Rows the scorecard refuses are left out of the score counts but counted in their bins, as
production would see them.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.card.scorecard import Scorecard
from scorecard.card.scoring import UnusualValues, apply_scorecard
from scorecard.data.outcome import BAD, GOOD, OTHER


class GroupCounts(NamedTuple):
    """Counts of one pass, with a leading axis over the groups present (in ``groups`` order).

    Attributes
    ----------
    groups : ndarray of int64
        The group keys, ascending.
    rows, rejected, left_out : ndarray
        Per group: rows read, rows the scorecard refuses, rows whose outcome is neither good
        nor bad (zero without an outcome column).
    score_rows, score_goods, score_bads : ndarray, shape (groups, scores)
        Rows (goods, bads) at each score from ``card.min_score``; the outcome parts are None
        when the rows carry no outcome column.
    bin_rows, bin_goods, bin_bads : list of ndarray, shape (groups, bins)
        Per characteristic; the outcome parts are None without an outcome column.
    unusual : dict
        Characteristic name -> :class:`~scorecard.card.scoring.UnusualValues` over all groups.
    """

    groups: np.ndarray
    rows: np.ndarray
    rejected: np.ndarray
    left_out: np.ndarray
    score_rows: np.ndarray
    score_goods: np.ndarray | None
    score_bads: np.ndarray | None
    bin_rows: list
    bin_goods: list | None
    bin_bads: list | None
    unusual: dict

    @property
    def has_outcome(self) -> bool:
        return self.score_goods is not None


def _per_group(index: np.ndarray, values: np.ndarray, n_groups: int, width: int) -> np.ndarray:
    """Rows per (group, value) as a (groups, width) table."""
    flat = np.bincount(index * width + values, minlength=n_groups * width)
    return flat.reshape(n_groups, width).astype(float)


def count_groups(card: Scorecard, frame: pd.DataFrame, keys=None,
                 label: np.ndarray | None = None) -> GroupCounts:
    """Score ``frame`` once and count its rows per group, score and attribute.

    Parameters
    ----------
    card : Scorecard
    frame : pandas.DataFrame
        Holds every characteristic of the card.
    keys : array_like of int, optional
        Group key of each row; default one group, key 0.
    label : ndarray, optional
        Outcome per row (:data:`GOOD`, :data:`BAD`, other); without it no outcome counts.

    Returns
    -------
    GroupCounts

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                  (Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,)),))
    >>> c = count_groups(card, pd.DataFrame({"x": [0.5, 2.0, None, 3.0]}), keys=[7, 7, 9, 9])
    >>> c.groups.tolist(), c.bin_rows[0].tolist()
    ([7, 9], [[1.0, 1.0, 0.0], [0.0, 1.0, 1.0]])
    """
    n = len(frame)
    keys = np.zeros(n, dtype=np.int64) if keys is None else np.asarray(keys, dtype=np.int64)
    groups, index = np.unique(keys, return_inverse=True)
    index = index.reshape(-1)
    g = len(groups)
    scored = apply_scorecard(card, frame)
    width = card.max_score - card.min_score + 1
    kept = ~scored.rejected
    at = scored.score - card.min_score
    sizes = [len(c.bins) for c in card.characteristics]
    rows = np.bincount(index, minlength=g).astype(float)
    rejected = np.bincount(index[scored.rejected], minlength=g).astype(float)

    def scores(mask):
        return _per_group(index[mask], at[mask], g, width)

    def bins(mask):
        return [_per_group(index[mask], scored.codes[mask, j].astype(np.int64), g, size)
                for j, size in enumerate(sizes)]

    every = np.ones(n, dtype=bool)
    if label is None:
        return GroupCounts(groups, rows, rejected, np.zeros(g), scores(kept), None, None,
                           bins(every), None, None, scored.unusual)
    good, bad = label == GOOD, label == BAD
    left_out = np.bincount(index[label == OTHER], minlength=g).astype(float)
    return GroupCounts(groups, rows, rejected, left_out, scores(kept), scores(kept & good),
                       scores(kept & bad), bins(every), bins(good), bins(bad), scored.unusual)


def _spread(counts: np.ndarray, where: np.ndarray, n_groups: int) -> np.ndarray:
    out = np.zeros((n_groups,) + counts.shape[1:])
    out[where] = counts
    return out


def merge_group_counts(a: GroupCounts, b: GroupCounts) -> GroupCounts:
    """The counts of two chunks of rows as one; groups are the union of both.

    Examples
    --------
    >>> one = GroupCounts(np.array([1]), np.array([2.0]), np.zeros(1), np.zeros(1),
    ...                   np.array([[2.0]]), None, None, [], None, None, {})
    >>> two = one._replace(groups=np.array([3]))
    >>> merged = merge_group_counts(one, two)
    >>> merged.groups.tolist(), merged.rows.tolist()
    ([1, 3], [2.0, 2.0])
    """
    if a.has_outcome != b.has_outcome:
        raise ValueError("cannot merge counts with and without an outcome")
    groups = np.union1d(a.groups, b.groups)
    g = len(groups)
    wa, wb = np.searchsorted(groups, a.groups), np.searchsorted(groups, b.groups)

    def add(x, y):
        return _spread(x, wa, g) + _spread(y, wb, g)

    def add_list(x, y):
        return None if x is None else [add(p, q) for p, q in zip(x, y)]

    unusual = {name: UnusualValues(*(p + q for p, q in zip(a.unusual[name], b.unusual[name])))
               for name in a.unusual}
    return GroupCounts(
        groups, add(a.rows, b.rows), add(a.rejected, b.rejected), add(a.left_out, b.left_out),
        add(a.score_rows, b.score_rows),
        None if a.score_goods is None else add(a.score_goods, b.score_goods),
        None if a.score_bads is None else add(a.score_bads, b.score_bads),
        add_list(a.bin_rows, b.bin_rows), add_list(a.bin_goods, b.bin_goods),
        add_list(a.bin_bads, b.bin_bads), unusual)
