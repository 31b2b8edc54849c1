"""Discrimination and score-band tables from score histograms.

Scores are integers, so each sample reduces to two histograms over the attainable score range
(goods and bads); AUC, Gini, KS and the gains table come from those exactly.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.card.points import Scaling, bad_probability_of_score
from scorecard.measures.ranking import discrimination


class ScoreHistogram(NamedTuple):
    """Weights of goods and bads at each integer score from ``low`` upwards."""

    low: int
    goods: np.ndarray
    bads: np.ndarray

    @property
    def scores(self) -> np.ndarray:
        return np.arange(self.low, self.low + len(self.goods))


def score_histogram(scores: np.ndarray, is_bad: np.ndarray, weight: np.ndarray,
                    low: int, high: int) -> ScoreHistogram:
    """Histogram of integer scores in ``[low, high]`` by outcome."""
    width = high - low + 1
    at = scores - low
    good = np.bincount(at[is_bad == 0], weights=weight[is_bad == 0], minlength=width)
    bad = np.bincount(at[is_bad == 1], weights=weight[is_bad == 1], minlength=width)
    return ScoreHistogram(low, good, bad)


def performance(hist: ScoreHistogram):
    """AUC, Gini and KS of one sample (see :func:`scorecard.measures.ranking.discrimination`)."""
    return discrimination(hist.goods, hist.bads)


def band_edges(hist: ScoreHistogram, n_bands: int) -> np.ndarray:
    """Lowest score of each band, so bands hold about equal shares of the sample's rows."""
    counts = hist.goods + hist.bads
    cum = np.cumsum(counts)
    if cum[-1] <= 0:
        return np.array([hist.low])
    targets = cum[-1] * np.arange(1, n_bands) / n_bands
    starts = np.searchsorted(cum, targets, side="right")
    return np.unique(np.concatenate([[0], starts])) + hist.low


def gains_table(hist: ScoreHistogram, starts: np.ndarray, scale: Scaling) -> pd.DataFrame:
    """Score bands from the highest-risk band up: counts, bad rates and cumulative shares."""
    idx = np.searchsorted(starts, hist.scores, side="right") - 1
    n = len(starts)
    goods = np.bincount(idx, weights=hist.goods, minlength=n)
    bads = np.bincount(idx, weights=hist.bads, minlength=n)
    weighted_score = np.bincount(idx, weights=hist.scores * (hist.goods + hist.bads), minlength=n)
    count = goods + bads
    high = np.append(starts[1:] - 1, hist.low + len(hist.goods) - 1)
    total_g, total_b = max(goods.sum(), 1e-300), max(bads.sum(), 1e-300)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_score = np.where(count > 0, weighted_score / count, np.nan)
        table = pd.DataFrame({
            "Band": np.arange(1, n + 1),
            "Lowest score": starts, "Highest score": high,
            "Rows": count, "Goods": goods, "Bads": bads,
            "Bad rate": np.where(count > 0, bads / count, np.nan),
            "Predicted bad rate": bad_probability_of_score(mean_score, scale),
            "Share of rows": count / count.sum(),
            "Cumulative share of bads": np.cumsum(bads) / total_b,
            "Cumulative share of goods": np.cumsum(goods) / total_g,
        })
    table["Gap (KS)"] = table["Cumulative share of bads"] - table["Cumulative share of goods"]
    return table


def pooled_histogram(hists) -> ScoreHistogram:
    """One histogram of several on the same scale (segments' cards), over the union of scores.

    Examples
    --------
    >>> a = ScoreHistogram(10, np.array([1.0, 2.0]), np.array([0.0, 1.0]))
    >>> b = ScoreHistogram(11, np.array([3.0]), np.array([1.0]))
    >>> pooled = pooled_histogram([a, b])
    >>> pooled.low, pooled.goods.tolist(), pooled.bads.tolist()
    (10, [1.0, 5.0], [0.0, 2.0])
    """
    hists = list(hists)
    low = min(h.low for h in hists)
    high = max(h.low + len(h.goods) for h in hists)
    goods, bads = np.zeros(high - low), np.zeros(high - low)
    for h in hists:
        goods[h.low - low:h.low - low + len(h.goods)] += h.goods
        bads[h.low - low:h.low - low + len(h.bads)] += h.bads
    return ScoreHistogram(low, goods, bads)
