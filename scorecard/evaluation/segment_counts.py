"""Counts of a file under a segmented model: each segment's rows counted with its own card.

A segmented model has one scale, so the scores of all segments pool: the score counts of every
segment add up on one grid from the model's lowest to its highest score. Characteristics do not
pool (each card has its own bins), so each card's characteristics stay apart, named
``<characteristic> (<segment>)``. :class:`PooledCard` gives the reports that read one card
(``compare``) this view of the model: the pooled score range, the shared scale and every
segment's characteristics under those names.

Rows no segment takes are counted as rows the model refuses, as the scorer does.
"""

from __future__ import annotations

import dataclasses
from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.card.scorecard import Development
from scorecard.card.scoring import UnusualValues
from scorecard.card.segmented import SegmentedScorecard
from scorecard.data.outcome import OTHER
from scorecard.evaluation.group_counts import GroupCounts, count_groups, merge_group_counts


def segment_label(characteristic: str, segment: str) -> str:
    """The name a segment card's characteristic carries in pooled reports."""
    return f"{characteristic} ({segment})"


class PooledCard(NamedTuple):
    """The card-like view of a segmented model that the count reports read.

    ``characteristics`` holds every card's characteristics in segment order, renamed by
    :func:`segment_label`; ``scaling``, ``min_score`` and ``max_score`` are the model's.
    """

    name: str
    scaling: object
    min_score: int
    max_score: int
    characteristics: tuple
    target: dict
    development: Development | None = None

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.characteristics)


def pooled_card(model: SegmentedScorecard) -> PooledCard:
    """The :class:`PooledCard` of ``model``."""
    chars = tuple(dataclasses.replace(c, name=segment_label(c.name, segment))
                  for segment, card in model.segments.items() for c in card.characteristics)
    return PooledCard(model.name, model.scaling, model.min_score, model.max_score, chars,
                      model.target, _pooled_development(model))


def _pooled_development(model: SegmentedScorecard) -> Development | None:
    """Every card's development counts as one: scores on the model's grid, bins under the
    pooled names. The stored AUC, Gini and KS are per card and do not pool, so none is kept.
    None when a card holds no development counts."""
    if any(card.development is None for card in model.cards):
        return None
    width = model.max_score - model.min_score + 1
    goods, bads = np.zeros(width), np.zeros(width)
    bin_goods, bin_bads = {}, {}
    for name, card in model.segments.items():
        dev = card.development
        start = card.min_score - model.min_score
        goods[start:start + len(dev.score_goods)] += dev.score_goods
        bads[start:start + len(dev.score_bads)] += dev.score_bads
        bin_goods.update({segment_label(k, name): v for k, v in dev.bin_goods.items()})
        bin_bads.update({segment_label(k, name): v for k, v in dev.bin_bads.items()})
    return Development(sum(c.development.rows for c in model.cards),
                       model.cards[0].development.unit, tuple(goods), tuple(bads), {},
                       bin_goods, bin_bads)


class SegmentCounts(NamedTuple):
    """One file counted under a segmented model.

    Attributes
    ----------
    pooled : GroupCounts
        One group: scores on the model's grid, pooled over segments; bins of every segment's
        characteristics in :class:`PooledCard` order; unusual values under the pooled names.
    rows : dict
        Segment name -> rows of the file that segment takes.
    segments : dict
        Segment name -> that segment's rows counted with its own card alone (scores from the
        card's own lowest score, its own bins), on the groups of ``pooled``: what each
        segment's score measures read.
    """

    pooled: GroupCounts
    rows: dict
    segments: dict = {}


def count_segments(model: SegmentedScorecard, frame: pd.DataFrame,
                   label: np.ndarray | None = None, keys=None) -> SegmentCounts:
    """Count the rows of ``frame`` per group, score and attribute, each with its segment's card.

    ``keys`` and ``label`` are those of :func:`~scorecard.evaluation.group_counts.count_groups`
    (default one group, key 0).

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE
    >>> from scorecard.card.segmented import SegmentRule
    >>> from scorecard.card.points import scaling
    >>> def card(low, high):
    ...     b = (Bin("< 1", RANGE, 5, 5, 0.0, low, upper=1.0), Bin(">= 1", RANGE, 5, 5, 0.0, high, lower=1.0))
    ...     c = Characteristic("x", "numeric", b, 1.0, "R01", "x", cuts=(1.0,))
    ...     return Scorecard("demo", scaling(600, 50, 20), 0.0, (c,))
    >>> model = SegmentedScorecard("demo", SegmentRule("s", ("a", "b"), groups=(("a",), ("b",))),
    ...                            (card(10, 30), card(30, 10)))
    >>> c = count_segments(model, pd.DataFrame({"s": ["a", "b", "c"], "x": [0.0, 0.0, 0.0]}))
    >>> c.rows, (model.min_score + np.flatnonzero(c.pooled.score_rows[0])).tolist()
    ({'a': 1, 'b': 1}, [10, 30])
    >>> c.pooled.rejected.tolist(), c.pooled.bin_rows[0].tolist(), list(c.pooled.unusual)
    ([1.0], [[1.0, 0.0]], ['x (a)', 'x (b)'])
    """
    n = len(frame)
    keys = np.zeros(n, dtype=np.int64) if keys is None else np.asarray(keys, dtype=np.int64)
    groups, index = np.unique(keys, return_inverse=True)
    index = index.reshape(-1)
    g = len(groups)
    segment = model.rule.codes(frame[model.rule.column])
    width = model.max_score - model.min_score + 1
    outcome = label is not None
    score = {part: np.zeros((g, width)) for part in ("rows", "goods", "bads")}
    bins = {part: [] for part in ("rows", "goods", "bads")}
    unusual, rows, own = {}, {}, {}
    # Rows no segment takes: refused by the model, so in no score and no bin.
    lost = segment < 0
    rejected = np.bincount(index[lost], minlength=g).astype(float)
    left_out = np.bincount(index[lost & (label == OTHER)] if outcome else index[:0],
                           minlength=g).astype(float)
    for code, (name, card) in enumerate(model.segments.items()):
        mine = np.flatnonzero(segment == code)
        rows[name] = int(len(mine))
        counts = _count_card(card, frame.iloc[mine], None if label is None else label[mine],
                             keys[mine])
        at = np.searchsorted(groups, counts.groups)
        start = card.min_score - model.min_score
        span = slice(start, start + card.max_score - card.min_score + 1)
        for part, table in (("rows", counts.score_rows), ("goods", counts.score_goods),
                            ("bads", counts.score_bads)):
            if table is not None:
                score[part][at, span] += table
        for part, tables in (("rows", counts.bin_rows), ("goods", counts.bin_goods),
                             ("bads", counts.bin_bads)):
            for table in tables or ():
                spread = np.zeros((g, table.shape[1]))
                spread[at] = table
                bins[part].append(spread)
        unusual.update({segment_label(k, name): v for k, v in counts.unusual.items()})
        rejected[at] += counts.rejected
        left_out[at] += counts.left_out
        own[name] = spread_groups(counts, groups)
    pooled = GroupCounts(
        groups, np.bincount(index, minlength=g).astype(float), rejected, left_out,
        score["rows"], score["goods"] if outcome else None, score["bads"] if outcome else None,
        bins["rows"], bins["goods"] if outcome else None, bins["bads"] if outcome else None,
        unusual)
    return SegmentCounts(pooled, rows, own)


def merge_segment_counts(a: SegmentCounts, b: SegmentCounts) -> SegmentCounts:
    """The counts of two chunks of rows as one (groups are the union of both)."""
    return SegmentCounts(merge_group_counts(a.pooled, b.pooled),
                         {k: a.rows[k] + b.rows[k] for k in a.rows},
                         {k: merge_group_counts(a.segments[k], b.segments[k])
                          for k in a.segments})


def spread_groups(counts: GroupCounts, groups: np.ndarray) -> GroupCounts:
    """``counts`` on the groups ``groups`` (a superset of its own), zero where it had none."""
    g = len(groups)

    def zeros(table):
        return None if table is None else np.zeros((g,) + table.shape[1:])

    def zeros_each(tables):
        return None if tables is None else [zeros(t) for t in tables]

    blank = GroupCounts(groups, np.zeros(g), np.zeros(g), np.zeros(g),
                        zeros(counts.score_rows), zeros(counts.score_goods),
                        zeros(counts.score_bads), zeros_each(counts.bin_rows),
                        zeros_each(counts.bin_goods), zeros_each(counts.bin_bads),
                        {k: type(v)(*(0 for _ in v)) for k, v in counts.unusual.items()})
    return merge_group_counts(counts, blank)


def _count_card(card, frame: pd.DataFrame, label, keys) -> GroupCounts:
    """``count_groups`` of one segment's rows, also when the segment takes no row."""
    if len(frame):
        return count_groups(card, frame, keys, label)
    width = card.max_score - card.min_score + 1
    none = np.zeros(0)
    bins = [np.zeros((0, len(c.bins))) for c in card.characteristics]
    outcome = label is not None
    return GroupCounts(np.zeros(0, dtype=np.int64), none, none, none, np.zeros((0, width)),
                       np.zeros((0, width)) if outcome else None,
                       np.zeros((0, width)) if outcome else None, bins,
                       list(bins) if outcome else None, list(bins) if outcome else None,
                       {c.name: UnusualValues(0, 0, 0) for c in card.characteristics})
