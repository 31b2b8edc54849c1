"""How well scores rank goods above bads: AUC, Gini and KS from two score histograms, and
DeLong's test of two AUCs measured on the same rows."""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
# scipy.special, not scipy.stats: the same functions that scipy.stats' normal and chi-square
# distributions call, without the second of imports that scipy.stats costs every command.
from scipy import special

from scorecard.measures.checks import as_counts, as_number, check_positive_total, check_same_length


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


class PairedAUC(NamedTuple):
    """Two scores' AUC on the same rows and DeLong's test of their difference.

    Attributes
    ----------
    auc_first, auc_second : float
        The AUC of each score.
    difference : float
        ``auc_second - auc_first``.
    standard_error : float
        DeLong's standard error of the difference (correlated ROC curves).
    ci_low, ci_high : float
        The two-sided confidence interval of the difference at ``level``.
    z, p_value : float
        The test statistic and its two-sided p-value (nan when the standard error is 0).
    """

    auc_first: float
    auc_second: float
    difference: float
    standard_error: float
    ci_low: float
    ci_high: float
    z: float
    p_value: float


def _placements(own, other_weights, own_scores, other_scores, higher_wins: bool):
    """For each entry, the share of the other class it beats (ties count half)."""
    order = np.argsort(other_scores, kind="stable")
    sorted_scores = other_scores[order]
    cumulative = np.concatenate(([0.0], np.cumsum(other_weights[order])))
    below = cumulative[np.searchsorted(sorted_scores, own_scores, side="left")]
    at_or_below = cumulative[np.searchsorted(sorted_scores, own_scores, side="right")]
    total = cumulative[-1]
    ties = at_or_below - below
    beaten = below if higher_wins else total - at_or_below
    return (beaten + 0.5 * ties) / total


def _weighted_covariance(a, b, weights):
    total = weights.sum()
    ma, mb = (weights * a).sum() / total, (weights * b).sum() / total
    return float((weights * (a - ma) * (b - mb)).sum() / (total - 1))


def paired_auc(first, second, goods, bads, level=0.95):
    """DeLong's test of two AUCs measured on the same rows, from counts per pair of scores.

    Each entry ``i`` is one distinct pair of scores (``first[i]``, ``second[i]``) with the
    weight of goods and of bads that hold it; higher scores mean lower risk in both. The
    variance of the difference comes from the structural components of DeLong, DeLong and
    Clarke-Pearson (1988), with counts as frequency weights.

    Parameters
    ----------
    first, second : array_like
        1-d scores of the two cards, one entry per distinct pair.
    goods, bads : array_like
        1-d weights of goods and of bads at each pair; each total must exceed 1.
    level : float, default 0.95
        Confidence level of the interval.

    Returns
    -------
    PairedAUC

    Examples
    --------
    >>> r = paired_auc([1, 2, 3, 1], [1, 2, 3, 3], [1, 5, 9, 2], [6, 3, 1, 2])
    >>> round(r.auc_first, 4), round(r.auc_second, 4), round(r.difference, 4)
    (0.799, 0.7647, -0.0343)
    """
    first = np.asarray(first, dtype=float)
    second = np.asarray(second, dtype=float)
    goods = as_counts(goods, "goods")
    bads = as_counts(bads, "bads")
    check_same_length(goods, "goods", bads, "bads")
    if first.shape != goods.shape or second.shape != goods.shape:
        raise ValueError("first, second: need one score per entry of goods and bads")
    if not (goods.sum() > 1 and bads.sum() > 1):
        raise ValueError("goods, bads: DeLong's variance needs more than one good and one bad")
    level = as_number(level, "level")
    if not 0 < level < 1:
        raise ValueError(f"level: must lie strictly between 0 and 1, got {level!r}")
    good_parts, bad_parts = [], []
    for scores in (first, second):
        good_parts.append(_placements(goods, bads, scores, scores, higher_wins=True))
        bad_parts.append(_placements(bads, goods, scores, scores, higher_wins=False))
    total_goods, total_bads = goods.sum(), bads.sum()
    auc = [float((goods * g).sum() / total_goods) for g in good_parts]
    s10 = np.array([[_weighted_covariance(a, b, goods) for b in good_parts] for a in good_parts])
    s01 = np.array([[_weighted_covariance(a, b, bads) for b in bad_parts] for a in bad_parts])
    contrast = np.array([-1.0, 1.0])
    variance = contrast @ s10 @ contrast / total_goods + contrast @ s01 @ contrast / total_bads
    error = float(np.sqrt(max(variance, 0.0)))
    difference = auc[1] - auc[0]
    half = float(special.ndtri(0.5 + level / 2)) * error
    if error > 0:
        z = difference / error
        p_value = float(2 * special.ndtr(-abs(z)))
    else:
        z = p_value = math.nan
    return PairedAUC(auc[0], auc[1], difference, error, difference - half, difference + half,
                     z, p_value)


class Interval(NamedTuple):
    """A point estimate with a two-sided confidence interval.

    Attributes
    ----------
    estimate, low, high : float
    standard_error : float
        nan where the interval does not come from one (a bootstrap).
    """

    estimate: float
    low: float
    high: float
    standard_error: float


def _normal_quantile(level) -> float:
    level = as_number(level, "level")
    if not 0 < level < 1:
        raise ValueError(f"level: must lie strictly between 0 and 1, got {level!r}")
    return float(special.ndtri(0.5 + level / 2))


def gini_interval(good_hist, bad_hist, level=0.95):
    """Gini with a confidence interval from DeLong's variance of the AUC, on score histograms.

    DeLong, DeLong and Clarke-Pearson (1988): each good's placement is the share of bads it
    outranks (ties count half), each bad's the share of goods it falls below; the AUC's
    variance is ``var(good placements) / G + var(bad placements) / B``. Scores are integers,
    so a placement depends only on the score and the sums run over the histogram, not the rows.
    ``Gini = 2 AUC - 1``; the interval is the normal one, clipped to [-1, 1].

    Parameters
    ----------
    good_hist, bad_hist : array_like
        Rows of goods and of bads at each score, ascending (at least two of each).
    level : float, default 0.95

    Returns
    -------
    Interval

    Examples
    --------
    >>> r = gini_interval([0, 1, 3], [3, 1, 0])
    >>> round(r.estimate, 4), r.low < r.estimate < r.high
    (0.9375, True)
    """
    goods = as_counts(good_hist, "good_hist")
    bads = as_counts(bad_hist, "bad_hist")
    check_same_length(goods, "good_hist", bads, "bad_hist")
    n_goods, n_bads = goods.sum(), bads.sum()
    if n_goods < 2 or n_bads < 2:
        raise ValueError("gini_interval needs at least two goods and two bads")
    # The structural components of paired_auc, for one score: the histogram's positions.
    scores = np.arange(goods.size, dtype=float)
    good_place = _placements(goods, bads, scores, scores, higher_wins=True)
    bad_place = _placements(bads, goods, scores, scores, higher_wins=False)
    auc = float((goods * good_place).sum() / n_goods)
    variance = (_weighted_covariance(good_place, good_place, goods) / n_goods
                + _weighted_covariance(bad_place, bad_place, bads) / n_bads)
    error = 2 * math.sqrt(max(variance, 0.0))
    z = _normal_quantile(level)
    gini = 2 * auc - 1
    return Interval(gini, max(-1.0, gini - z * error), min(1.0, gini + z * error), error)


def ks_interval(good_hist, bad_hist, level=0.95, resamples=400, seed=0):
    """KS with a percentile bootstrap interval, resampling the histograms, not the rows.

    Each resample draws the goods' histogram from a multinomial with the observed goods' shares
    and the bads' likewise (common practice); the interval is the ``(1 - level) / 2`` and
    ``(1 + level) / 2`` quantiles of the resampled KS. Seeded, so a report is repeatable.

    Parameters
    ----------
    good_hist, bad_hist : array_like
        Whole counts of goods and bads at each score, ascending.
    level : float, default 0.95
    resamples : int, default 400
    seed : int, default 0

    Returns
    -------
    Interval
        ``standard_error`` is the resamples' standard deviation.

    Examples
    --------
    >>> r = ks_interval([0, 10, 30], [30, 10, 0])
    >>> r.estimate, r.low <= r.estimate <= r.high
    (0.75, True)
    """
    _normal_quantile(level)
    goods = as_counts(good_hist, "good_hist")
    bads = as_counts(bad_hist, "bad_hist")
    point = discrimination(goods, bads).ks
    rng = np.random.default_rng(seed)
    n_goods, n_bads = int(round(goods.sum())), int(round(bads.sum()))
    drawn_goods = rng.multinomial(n_goods, goods / goods.sum(), size=resamples)
    drawn_bads = rng.multinomial(n_bads, bads / bads.sum(), size=resamples)
    gap = np.abs(np.cumsum(drawn_bads, axis=1) / n_bads - np.cumsum(drawn_goods, axis=1) / n_goods)
    ks = gap.max(axis=1)
    low, high = np.quantile(ks, [(1 - level) / 2, (1 + level) / 2])
    return Interval(point, float(low), float(high), float(ks.std(ddof=1)))
