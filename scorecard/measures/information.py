"""Information measures on counts: log-odds, entropy, weight of evidence, information value,
mutual information and Cramér's V (see the package docstring for the conventions).

The one home of the weight of evidence and information value formulas: :func:`woe_of_shares`,
:func:`shrunk_woe`, :func:`iv_terms` and :func:`woe_standard_error` are the element-wise
kernels, unchecked so that the exact optimiser can call them on whole arrays of candidate bins;
every other stage calls them or the checked functions built on them.
"""

from __future__ import annotations

import math
import warnings
from typing import NamedTuple

import numpy as np
from scipy import special

from scorecard.measures.checks import (
    as_counts,
    as_number,
    as_table,
    check_positive_total,
    check_same_length,
    check_smoothing,
)


class InformationValue(NamedTuple):
    """Information value of a binned characteristic.

    Attributes
    ----------
    total : float
        Sum of ``per_bin``; ``inf`` when some bin holds only goods or only bads.
    per_bin : ndarray
        Contribution ``(g_i/G - b_i/B) * WoE_i`` of every bin (0 for a bin with no cases).
    woe : ndarray
        Weight of evidence of every bin.
    """

    total: float
    per_bin: np.ndarray
    woe: np.ndarray


class MutualInformation(NamedTuple):
    """Mutual information in nats and in bits."""

    nats: float
    bits: float


def logit(p):
    """Log-odds ``ln(p / (1 - p))``, element-wise.

    Parameters
    ----------
    p : array_like
        Probabilities in [0, 1]; 0 and 1 give -inf and +inf.

    Returns
    -------
    ndarray or float
        Log-odds with the shape of ``p``.

    Examples
    --------
    >>> float(logit(0.75))  # odds 3:1
    1.0986122886681098
    """
    probabilities = np.asarray(p, dtype=float)
    outside = np.flatnonzero(~((probabilities >= 0) & (probabilities <= 1)))
    if outside.size:
        first = probabilities.flat[outside[0]]
        raise ValueError(f"p: probabilities must lie in [0, 1], got {first}")
    return special.logit(probabilities)


def logistic(x):
    """Logistic function ``1 / (1 + exp(-x))``, element-wise and without overflow.

    Parameters
    ----------
    x : array_like
        Log-odds; ±inf are allowed and give 1 and 0.

    Returns
    -------
    ndarray or float
        Probabilities with the shape of ``x``.

    Examples
    --------
    >>> float(logistic(0.0))
    0.5
    """
    log_odds = np.asarray(x, dtype=float)
    if np.any(np.isnan(log_odds)):
        raise ValueError("x: must not contain nan")
    return special.expit(log_odds)


def entropy(counts):
    """Shannon entropy, in nats, of the distribution proportional to ``counts``.

    Parameters
    ----------
    counts : array_like
        1-d non-negative weights; zero entries contribute nothing.

    Returns
    -------
    float

    Examples
    --------
    >>> entropy([5, 5]) == math.log(2)
    True
    """
    weights = as_counts(counts, "counts")
    check_positive_total(weights, "counts", "entropy needs a distribution")
    shares = weights / weights.sum()
    return float(-special.xlogy(shares, shares).sum())


def woe_of_shares(good_share, bad_share):
    """Weight of evidence ``ln(good_share / bad_share)``, element-wise and unchecked.

    The kernel behind every weight of evidence in the product. The log is taken of the
    quotient, one rounding fewer than a difference of logs.

    Parameters
    ----------
    good_share, bad_share : array_like
        Shares ``g_i / G`` and ``b_i / B`` (any broadcastable shapes), non-negative.

    Returns
    -------
    ndarray or float
        ``-inf`` where only the good share is 0, ``+inf`` where only the bad share is 0, nan
        where both are; no RuntimeWarning.

    Examples
    --------
    >>> woe_of_shares(np.array([0.25, 0.75, 0.0]), np.array([0.75, 0.25, 0.5])).round(4)
    array([-1.0986,  1.0986,    -inf])
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(np.divide(good_share, bad_share))


def iv_terms(good_share, bad_share, woe=None):
    """Information value terms ``(good_share - bad_share) * WoE``, element-wise and unchecked.

    Parameters
    ----------
    good_share, bad_share : array_like
        Shares ``g_i / G`` and ``b_i / B`` (any broadcastable shapes), non-negative.
    woe : array_like, optional
        The weight of evidence to weigh the shares by, when it is not their own
        :func:`woe_of_shares` (a scorecard's bins may carry a fallback WoE). Default: theirs.

    Returns
    -------
    ndarray or float
        With their own WoE every term is ``>= 0``: ``+inf`` where exactly one share is 0, and 0
        where both are (a bin with no cases adds nothing, though its WoE is nan).

    Examples
    --------
    >>> iv_terms(np.array([0.25, 0.75]), np.array([0.75, 0.25])).round(4)
    array([0.5493, 0.5493])
    >>> float(iv_terms(0.0, 0.0)), float(iv_terms(0.0, 0.5))
    (0.0, inf)
    """
    good_share, bad_share = np.asarray(good_share), np.asarray(bad_share)
    if woe is None:
        woe = woe_of_shares(good_share, bad_share)
    no_cases = (good_share == 0) & (bad_share == 0)
    return (good_share - bad_share) * np.where(no_cases, 0.0, woe)


def woe_standard_error(goods, bads):
    """Standard error ``sqrt(1 / g + 1 / b)`` of a bin's weight of evidence, element-wise.

    The delta-method error of a log-odds from ``g`` goods and ``b`` bads (from memory; the
    totals' own error is neglected). Unchecked.

    Parameters
    ----------
    goods, bads : array_like
        Counts of goods and bads per bin.

    Returns
    -------
    ndarray or float
        ``inf`` where a bin has no goods or no bads; no RuntimeWarning.

    Examples
    --------
    >>> float(woe_standard_error(4.0, 4.0))
    0.7071067811865476
    """
    with np.errstate(divide="ignore"):
        return np.sqrt(np.divide(1.0, goods) + np.divide(1.0, bads))


def shrunk_woe(goods, bads, total_goods, total_bads, prior_rows):
    """Weight of evidence of bins shrunk toward 0 by a prior worth ``prior_rows`` rows.

    Each bin gets ``prior_rows`` pseudo-rows at the overall rate: ``prior_rows * G / N`` goods
    and ``prior_rows * B / N`` bads, ``N = G + B``. The result is the log of the bin's
    posterior odds (beta prior centred on the overall bad rate) over the overall odds, so a
    bin of ``n`` rows keeps about ``n / (n + prior_rows)`` of its own evidence: large bins
    are nearly unchanged, small ones drawn toward average risk, and a bin with no goods or no
    bads has a finite value. ``prior_rows=0`` gives the raw :func:`woe_of_shares`; an infinite
    prior gives 0 everywhere. Element-wise and unchecked.

    Parameters
    ----------
    goods, bads : array_like
        Counts of goods and bads per bin.
    total_goods, total_bads : float
        Totals ``G`` and ``B`` of the characteristic (all of its bins).
    prior_rows : float
        Pseudo-count of the prior, ``>= 0`` (``inf`` allowed).

    Returns
    -------
    ndarray or float
        The sign is that of ``g / G - b / B``, as for the raw weight of evidence, so IV
        terms weighed by it are never negative.

    Examples
    --------
    >>> shrunk_woe(np.array([30.0, 3.0]), np.array([10.0, 1.0]), 60.0, 40.0, 0.0).round(4)
    array([0.6931, 0.6931])
    >>> shrunk_woe(np.array([30.0, 3.0]), np.array([10.0, 1.0]), 60.0, 40.0, 10.0).round(4)
    array([0.539 , 0.1823])
    """
    if np.isinf(prior_rows):
        return np.zeros(np.broadcast(goods, bads).shape)[()]
    if prior_rows == 0:
        return woe_of_shares(np.divide(goods, total_goods), np.divide(bads, total_bads))
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.divide(prior_rows, np.add(total_goods, total_bads))
        return woe_of_shares((goods + share * total_goods) / total_goods,
                             (bads + share * total_bads) / total_bads)


def _smoothed_shares(goods, bads, smoothing):
    goods = as_counts(goods, "goods")
    bads = as_counts(bads, "bads")
    check_same_length(goods, "goods", bads, "bads")
    why = "weight of evidence needs at least one good and one bad"
    check_positive_total(goods, "goods", why)
    check_positive_total(bads, "bads", why)
    smoothing = check_smoothing(smoothing)
    goods = goods + smoothing
    bads = bads + smoothing
    return goods / goods.sum(), bads / bads.sum()


def _warn_empty_bins(good_share, bad_share):
    empty = np.flatnonzero((good_share == 0) & (bad_share == 0))
    if empty.size:
        warnings.warn(
            f"bins {empty.tolist()} hold no goods and no bads; their weight of evidence is nan",
            stacklevel=3,
        )


def weight_of_evidence(goods, bads, smoothing=0.0):
    """Weight of evidence ``ln((g_i / G) / (b_i / B))`` of every bin.

    Parameters
    ----------
    goods, bads : array_like
        1-d weights of goods and bads per bin, of equal length; each must have a positive total.
    smoothing : float, default 0.0
        Added to the goods and to the bads of every bin before shares are taken. 0.5 is the
        documented fallback when some bin has zero goods or zero bads.

    Returns
    -------
    ndarray
        With ``smoothing=0`` a bin with no goods gives -inf and a bin with no bads +inf, without
        a RuntimeWarning. A bin with neither gives nan and a UserWarning.

    Examples
    --------
    >>> weight_of_evidence([10, 30], [30, 10]).round(4)
    array([-1.0986,  1.0986])
    """
    good_share, bad_share = _smoothed_shares(goods, bads, smoothing)
    _warn_empty_bins(good_share, bad_share)
    return woe_of_shares(good_share, bad_share)


def information_value(goods, bads, smoothing=0.0):
    """Information value of a binned characteristic, with its per-bin parts and WoE.

    Parameters
    ----------
    goods, bads, smoothing
        As for :func:`weight_of_evidence`; the shares used are those after smoothing.

    Returns
    -------
    InformationValue
        ``total`` is ``inf`` when, unsmoothed, a bin holds only goods or only bads. A bin with
        no cases contributes 0.

    Examples
    --------
    >>> round(information_value([10, 30], [30, 10]).total, 4)
    1.0986
    """
    good_share, bad_share = _smoothed_shares(goods, bads, smoothing)
    _warn_empty_bins(good_share, bad_share)
    woe = woe_of_shares(good_share, bad_share)
    per_bin = iv_terms(good_share, bad_share, woe)
    return InformationValue(total=float(per_bin.sum()), per_bin=per_bin, woe=woe)


def iv_strength(iv):
    """Plain-English strength of an information value.

    Cut-offs: below 0.02 'not predictive', below 0.1 'weak', below 0.3 'medium', up to 0.5
    'strong' and above 0.5 'suspiciously strong', a hint to look for leakage of the outcome.

    Parameters
    ----------
    iv : float
        A non-negative information value (``inf`` allowed).

    Returns
    -------
    str

    Examples
    --------
    >>> iv_strength(0.15)
    'medium'
    """
    iv = as_number(iv, "iv")
    if not iv >= 0:
        raise ValueError(f"iv: must be a number >= 0, got {iv!r}")
    if iv < 0.02:
        return "not predictive"
    if iv < 0.1:
        return "weak"
    if iv < 0.3:
        return "medium"
    if iv <= 0.5:
        return "strong"
    return "suspiciously strong"


def mutual_information(table):
    """Mutual information between the row and column variables of a contingency table.

    Computed as ``sum p_ij ln(p_ij / (p_i. p_.j))`` over non-empty cells, which equals
    ``H(X) + H(Y) - H(X, Y)`` without the cancellation of subtracting entropies; rounding
    below zero is clipped to 0.

    Parameters
    ----------
    table : array_like
        2-d non-negative weights, rows = bins, columns = classes or groups.

    Returns
    -------
    MutualInformation

    Examples
    --------
    >>> mutual_information([[5, 0], [0, 5]]).bits
    1.0
    """
    weights = as_table(table)
    joint = weights / weights.sum()
    row_share = joint.sum(axis=1, keepdims=True)
    column_share = joint.sum(axis=0, keepdims=True)
    rows, columns = np.nonzero(joint)
    cells = joint[rows, columns]
    terms = cells * (
        np.log(cells) - np.log(row_share[rows, 0]) - np.log(column_share[0, columns])
    )
    nats = max(float(terms.sum()), 0.0)
    return MutualInformation(nats=nats, bits=nats / math.log(2))


def outcome_mutual_information(goods, bads):
    """Mutual information between the bin and the good/bad outcome.

    Parameters
    ----------
    goods, bads : array_like
        1-d weights of goods and bads per bin, of equal length.

    Returns
    -------
    MutualInformation

    Examples
    --------
    >>> outcome_mutual_information([10, 10], [10, 10]).nats
    0.0
    """
    goods = as_counts(goods, "goods")
    bads = as_counts(bads, "bads")
    check_same_length(goods, "goods", bads, "bads")
    return mutual_information(np.column_stack([goods, bads]))


def cramers_v(table):
    """Cramér's V of a contingency table, without bias correction.

    ``sqrt(chi2 / (N (k - 1)))`` with ``chi2`` Pearson's statistic (no continuity correction)
    and ``k`` the smaller of the numbers of rows and columns. Empty rows and columns are
    dropped first, since they carry no information and would make expected counts zero.

    Parameters
    ----------
    table : array_like
        2-d non-negative weights.

    Returns
    -------
    float
        In [0, 1]; nan with a warning when fewer than two non-empty rows or columns remain.

    Examples
    --------
    >>> cramers_v([[10, 0], [0, 10]])
    1.0
    """
    weights = as_table(table)
    weights = weights[weights.sum(axis=1) > 0][:, weights.sum(axis=0) > 0]
    smaller_side = min(weights.shape)
    if smaller_side < 2:
        warnings.warn(
            "table: fewer than two non-empty rows or columns; Cramér's V is nan",
            stacklevel=2,
        )
        return math.nan
    total = weights.sum()
    expected = np.outer(weights.sum(axis=1), weights.sum(axis=0)) / total
    chi_square = ((weights - expected) ** 2 / expected).sum()
    return float(np.clip(math.sqrt(chi_square / (total * (smaller_side - 1))), 0.0, 1.0))
