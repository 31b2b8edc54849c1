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

from scorecard.card.scoring import UnusualValues
from scorecard.card.segmented import SegmentedScorecard
from scorecard.data.outcome import OTHER
from scorecard.evaluation.group_counts import GroupCounts, count_groups


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

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.characteristics)


def pooled_card(model: SegmentedScorecard) -> PooledCard:
    """The :class:`PooledCard` of ``model``."""
    chars = tuple(dataclasses.replace(c, name=segment_label(c.name, segment))
                  for segment, card in model.segments.items() for c in card.characteristics)
    return PooledCard(model.name, model.scaling, model.min_score, model.max_score, chars,
                      model.target)


class SegmentCounts(NamedTuple):
    """One file counted under a segmented model.

    Attributes
    ----------
    pooled : GroupCounts
        One group: scores on the model's grid, pooled over segments; bins of every segment's
        characteristics in :class:`PooledCard` order; unusual values under the pooled names.
    rows : dict
        Segment name -> rows of the file that segment takes.
    """

    pooled: GroupCounts
    rows: dict


def count_segments(model: SegmentedScorecard, frame: pd.DataFrame,
                   label: np.ndarray | None = None) -> SegmentCounts:
    """Count the rows of ``frame`` per score and per attribute, each with its segment's card.

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
    segment = model.rule.codes(frame[model.rule.column])
    width = model.max_score - model.min_score + 1
    has_outcome = label is not None
    score = {part: np.zeros((1, width)) for part in ("rows", "goods", "bads")}
    bins = {part: [] for part in ("rows", "goods", "bads")}
    unusual = {}
    rows = {}
    total_rejected = total_left_out = 0.0
    for index, (name, card) in enumerate(model.segments.items()):
        mine = np.flatnonzero(segment == index)
        rows[name] = int(len(mine))
        counts = _count_card(card, frame.iloc[mine], None if label is None else label[mine])
        start = card.min_score - model.min_score
        span = slice(start, start + card.max_score - card.min_score + 1)
        score["rows"][0, span] += counts.score_rows[0]
        if has_outcome:
            score["goods"][0, span] += counts.score_goods[0]
            score["bads"][0, span] += counts.score_bads[0]
        bins["rows"] += counts.bin_rows
        if has_outcome:
            bins["goods"] += counts.bin_goods
            bins["bads"] += counts.bin_bads
        unusual.update({segment_label(k, name): v for k, v in counts.unusual.items()})
        total_rejected += counts.rejected[0]
        total_left_out += counts.left_out[0]
    # Rows no segment takes: refused by the model, so in no score and no bin.
    lost = segment < 0
    total_rejected += lost.sum()
    if has_outcome:
        total_left_out += (label[lost] == OTHER).sum()
    pooled = GroupCounts(
        np.zeros(1, dtype=np.int64), np.array([float(len(frame))]), np.array([total_rejected]),
        np.array([float(total_left_out)]), score["rows"],
        score["goods"] if has_outcome else None, score["bads"] if has_outcome else None,
        bins["rows"], bins["goods"] if has_outcome else None,
        bins["bads"] if has_outcome else None, unusual)
    return SegmentCounts(pooled, rows)


def _count_card(card, frame: pd.DataFrame, label) -> GroupCounts:
    """``count_groups`` of one group, also when the segment takes no row of the file."""
    if len(frame):
        return count_groups(card, frame, label=label)
    width = card.max_score - card.min_score + 1
    none = np.zeros(1)
    bins = [np.zeros((1, len(c.bins))) for c in card.characteristics]
    outcome = label is not None
    return GroupCounts(np.zeros(1, dtype=np.int64), none, none, none, np.zeros((1, width)),
                       np.zeros((1, width)) if outcome else None,
                       np.zeros((1, width)) if outcome else None, bins,
                       list(bins) if outcome else None, list(bins) if outcome else None,
                       {c.name: UnusualValues(0, 0, 0) for c in card.characteristics})
