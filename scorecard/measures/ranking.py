"""How well scores rank goods above bads: AUC, Gini and KS from two score histograms."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from scorecard.measures.checks import as_counts, check_positive_total, check_same_length


class Discrimination(NamedTuple):
    """How well a score separates goods from bads.

    Attributes
    ----------
    auc : float
        P(score of a random good > score of a random bad) + 0.5 P(tie).
    gini : float
        ``2 * auc - 1``.
    ks : float
        Largest gap between the cumulative shares of bads and of goods.
    ks_index : int
        First score position where that gap is reached.
    """

    auc: float
    gini: float
    ks: float
    ks_index: int


def discrimination(good_hist, bad_hist):
    """AUC, Gini and Kolmogorov-Smirnov statistic from score histograms.

    Parameters
    ----------
    good_hist, bad_hist : array_like
        1-d weights of goods and bads at each score value, values in ascending order (higher
        score = lower risk); equal lengths, each with a positive total.

    Returns
    -------
    Discrimination

    Examples
    --------
    >>> discrimination([0, 1, 3], [3, 1, 0]).auc
    0.96875
    """
    goods = as_counts(good_hist, "good_hist")
    bads = as_counts(bad_hist, "bad_hist")
    check_same_length(goods, "good_hist", bads, "bad_hist")
    why = "discrimination needs at least one good and one bad"
    check_positive_total(goods, "good_hist", why)
    check_positive_total(bads, "bad_hist", why)
    total_goods, total_bads = goods.sum(), bads.sum()
    cumulative_bads = np.cumsum(bads)
    bads_below = np.concatenate(([0.0], cumulative_bads[:-1]))
    wins = (goods * (bads_below + 0.5 * bads)).sum()
    auc = float(np.clip(wins / (total_goods * total_bads), 0.0, 1.0))
    gap = np.abs(cumulative_bads / total_bads - np.cumsum(goods) / total_goods)
    ks_index = int(np.argmax(gap))
    return Discrimination(auc=auc, gini=2 * auc - 1, ks=float(gap[ks_index]), ks_index=ks_index)
