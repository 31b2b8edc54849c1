"""The scorecard's own tables as DataFrames: points per attribute, a characteristic's bins,
the characteristics in the model, and the odds at round scores.

They read only the :class:`~scorecard.card.scorecard.Scorecard`, so a notebook shows them
from a model file alone, and the workbook writes the same tables.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from scorecard.card.points import bad_probability_of_score, odds_of_score

if TYPE_CHECKING:   # the scorecard's methods import this module: no import back at run time
    from scorecard.card.scorecard import Characteristic, Scorecard

# Steps between the scores of the distribution table and of the score-to-odds table: the
# smallest of these that keeps the table within the given number of rows. Odds are read at
# scores that are multiples of ten.
ROUND_STEPS = (1, 2, 5, 10, 20, 25, 50, 100, 200, 500, 1000)
ODDS_STEPS = (10, 20, 50, 100, 200, 500, 1000)

BIN_COLUMNS = ["Characteristic", "Attribute", "Kind", "Rows", "Goods", "Bads", "Bad rate",
               "Share of rows", "Weight of evidence", "IV contribution", "Points", "Note"]
POINT_COLUMNS = ["Characteristic", "Attribute", "Points", "Reason code", "Reason",
                 "Weight of evidence", "Coefficient", "Note"]


def attribute_labels(char: Characteristic) -> list[str]:
    """Labels of the bins of ``char``, made unique within the characteristic.

    A categorical level can carry the same text as a bin of another kind (a level named
    ``missing``); the spreadsheet looks attributes up by label, so a repeated label gets its
    bin kind appended.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, LEVELS, MISSING
    >>> bins = (Bin("missing", LEVELS, 1, 1, 0.0, 1, levels=("missing",)),
    ...         Bin("missing", MISSING, 1, 1, 0.0, 2))
    >>> attribute_labels(Characteristic("x", "categorical", bins, 1.0, "R01", "x"))
    ['missing (levels)', 'missing (missing)']
    """
    labels = [b.label for b in char.bins]
    repeated = {label for label in labels if labels.count(label) > 1}
    out = [f"{b.label} ({b.kind})" if b.label in repeated else b.label for b in char.bins]
    seen: dict[str, int] = {}
    for i, label in enumerate(out):
        seen[label] = seen.get(label, 0) + 1
        if seen[label] > 1:
            out[i] = f"{label} [{seen[label]}]"
    return out

def points_frame(card: Scorecard) -> pd.DataFrame:
    """One row per attribute of every characteristic in the model, in scorecard order."""
    frames = [pd.DataFrame({
        "Characteristic": c.name, "Attribute": attribute_labels(c),
        "Points": [b.points for b in c.bins], "Reason code": c.reason_code, "Reason": c.reason,
        "Weight of evidence": [b.woe for b in c.bins], "Coefficient": c.coefficient,
        "Note": [b.note for b in c.bins],
    }, columns=POINT_COLUMNS) for c in card.characteristics]
    return pd.concat(frames, ignore_index=True)

def round_step(span: float, max_rows: int, steps=ROUND_STEPS) -> int:
    """The smallest of ``steps`` that covers ``span`` points in at most ``max_rows`` rows.

    Examples
    --------
    >>> round_step(377, 40), round_step(377, 20), round_step(3, 40), round_step(3, 40, ODDS_STEPS)
    (10, 20, 1, 10)
    """
    return next((s for s in steps if span / s + 1 <= max_rows), steps[-1])

def odds_frame(card: Scorecard, max_rows: int = 40) -> pd.DataFrame:
    """Score, good:bad odds and bad probability at round scores across the attainable range."""
    low, high = card.min_score, card.max_score
    step = round_step(high - low, max_rows, ODDS_STEPS)
    scores = np.arange(math.ceil(low / step) * step, high + 1, step)
    if scores.size == 0:
        # A range narrower than one step holds no multiple of it: show its two ends.
        scores = np.unique([low, high])
    return pd.DataFrame({
        "Score": scores,
        "Good:bad odds": odds_of_score(scores, card.scaling),
        "Bad probability": bad_probability_of_score(scores, card.scaling),
    })

def model_frame(card: Scorecard) -> pd.DataFrame:
    """The characteristics in the model with their reason code, strength and points range."""
    chars = card.characteristics
    return pd.DataFrame({
        "Characteristic": [c.name for c in chars],
        "Reason code": [c.reason_code for c in chars],
        "Information value": [c.information_value for c in chars],
        "Coefficient": [c.coefficient for c in chars],
        "Lowest points": [min(b.points for b in c.bins) for c in chars],
        "Highest points": [max(b.points for b in c.bins) for c in chars],
    })



def bins_frame(char: Characteristic, with_points: bool = True) -> pd.DataFrame:
    """The bins of one characteristic with development counts, bad rate, WoE, IV part, points.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, RANGE
    >>> bins = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...         Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0))
    >>> frame = bins_frame(Characteristic("x", "numeric", bins, 1.0, "R01", "x is low"))
    >>> frame["Bad rate"].tolist(), frame["Points"].tolist()
    ([0.4, 0.1], [10, 30])
    """
    goods = np.array([b.goods for b in char.bins], dtype=float)
    bads = np.array([b.bads for b in char.bins], dtype=float)
    woe = np.array([b.woe for b in char.bins], dtype=float)
    rows = goods + bads
    share_goods = goods / max(goods.sum(), np.finfo(float).tiny)
    share_bads = bads / max(bads.sum(), np.finfo(float).tiny)
    with np.errstate(invalid="ignore", divide="ignore"):
        bad_rate = np.where(rows > 0, bads / rows, np.nan)
    points = [b.points if with_points else None for b in char.bins]
    return pd.DataFrame({
        "Characteristic": char.name, "Attribute": attribute_labels(char),
        "Kind": [b.kind for b in char.bins], "Rows": rows, "Goods": goods, "Bads": bads,
        "Bad rate": bad_rate, "Share of rows": rows / max(rows.sum(), np.finfo(float).tiny),
        "Weight of evidence": woe, "IV contribution": (share_goods - share_bads) * woe,
        "Points": pd.array(points, dtype="Int64"), "Note": [b.note for b in char.bins],
    }, columns=BIN_COLUMNS)
