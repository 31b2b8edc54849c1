"""Measures over count arrays: odds, entropy, weight of evidence, association, ranking and drift.

Every function here works on arrays of (possibly weighted, float) counts, never on rows, so a
caller first aggregates its data (for example with ``np.bincount``) and then asks for a measure.
All logarithms are natural (nats); bits are nats divided by ``ln 2``.

Conventions
-----------
* A *good* is the non-event, a *bad* the event. The model predicts the log-odds of GOOD.
* Weight of evidence of bin ``i`` is ``ln((g_i / G) / (b_i / B))``: positive means lower risk.
* Information value is ``sum((g_i / G - b_i / B) * WoE_i)``, which is never negative.
* Higher scores mean lower risk, so score histograms are given in ascending score order.

Invalid arrays (wrong shape, unequal lengths, non-finite or negative entries, zero totals)
raise :class:`ValueError` naming the argument and the first entry at fault.
"""

import math
import warnings
from typing import NamedTuple

import numpy as np
from scipy import special, stats

__all__ = [
    "Discrimination",
    "HosmerLemeshow",
    "InformationValue",
    "MutualInformation",
    "StabilityIndex",
    "cramers_v",
    "discrimination",
    "entropy",
    "hosmer_lemeshow",
    "information_value",
    "iv_strength",
    "logistic",
    "logit",
    "mutual_information",
    "outcome_mutual_information",
    "stability_critical_value",
    "stability_index",
    "stability_status",
    "weight_of_evidence",
]


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


class StabilityIndex(NamedTuple):
    """Population (or characteristic) stability index and its parts.

    Attributes
    ----------
    total : float
        Sum of ``contributions``.
    contributions : ndarray
        ``(c_i - b_i) * ln(c_i / b_i)`` of every bin, on shares.
    baseline_share, current_share : ndarray
        The shares actually used, after any smoothing.
    """

    total: float
    contributions: np.ndarray
    baseline_share: np.ndarray
    current_share: np.ndarray


class HosmerLemeshow(NamedTuple):
    """Hosmer-Lemeshow goodness-of-fit test result."""

    statistic: float
    dof: int
    p_value: float


def _as_counts(values, name):
    """Return ``values`` as a 1-d float array of finite, non-negative counts."""
    try:
        counts = np.asarray(values, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name}: must be an array of numbers ({exc})") from None
    if counts.ndim != 1:
        raise ValueError(f"{name}: must be 1-dimensional, got {counts.ndim} dimensions")
    if counts.size == 0:
        raise ValueError(f"{name}: must not be empty")
    _check_finite_non_negative(counts, name)
    return counts


def _check_finite_non_negative(array, name):
    rules = ((~np.isfinite(array), "must be finite"), (array < 0, "must not be negative"))
    for failed, rule in rules:
        bad = np.flatnonzero(failed)
        if bad.size:
            index = np.unravel_index(bad[0], array.shape)
            where = ", ".join(str(int(i)) for i in index)
            raise ValueError(f"{name}[{where}]: {rule}, got {array[index]}")


def _raise_at_first(failed, name, rule, values, sizes):
    bad = np.flatnonzero(failed)
    if bad.size:
        i = bad[0]
        raise ValueError(f"{name}[{i}]: {rule}[{i}] = {sizes[i]}, got {values[i]}")


def _check_same_length(first, first_name, second, second_name):
    if first.size != second.size:
        raise ValueError(
            f"{first_name} and {second_name}: must have the same length, "
            f"got {first.size} and {second.size}"
        )


def _check_positive_total(counts, name, why):
    if not counts.sum() > 0:
        raise ValueError(f"{name}: total is zero; {why}")


def _as_number(value, name):
    try:
        return float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: must be a number, got {value!r}") from None


def _check_smoothing(smoothing):
    smoothing = _as_number(smoothing, "smoothing")
    if not (math.isfinite(smoothing) and smoothing >= 0):
        raise ValueError(f"smoothing: must be a finite number >= 0, got {smoothing!r}")
    return smoothing


def _as_table(table):
    """Return ``table`` as a 2-d float array of finite, non-negative weights with a positive sum."""
    try:
        weights = np.asarray(table, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"table: must be an array of numbers ({exc})") from None
    if weights.ndim != 2:
        raise ValueError(f"table: must be 2-dimensional, got {weights.ndim} dimensions")
    if weights.size == 0:
        raise ValueError("table: must not be empty")
    _check_finite_non_negative(weights, "table")
    _check_positive_total(weights, "table", "a contingency table needs some weight")
    return weights


def _log_ratio(numerator, denominator):
    """``ln(numerator / denominator)`` with ±inf for one zero side and nan for both, silently."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(numerator) - np.log(denominator)


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
    weights = _as_counts(counts, "counts")
    _check_positive_total(weights, "counts", "entropy needs a distribution")
    shares = weights / weights.sum()
    return float(-special.xlogy(shares, shares).sum())


def _smoothed_shares(goods, bads, smoothing):
    goods = _as_counts(goods, "goods")
    bads = _as_counts(bads, "bads")
    _check_same_length(goods, "goods", bads, "bads")
    why = "weight of evidence needs at least one good and one bad"
    _check_positive_total(goods, "goods", why)
    _check_positive_total(bads, "bads", why)
    smoothing = _check_smoothing(smoothing)
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
    return _log_ratio(good_share, bad_share)


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
    woe = _log_ratio(good_share, bad_share)
    # A bin without cases has equal (zero) shares, so it adds nothing even though its WoE is nan.
    no_cases = (good_share == 0) & (bad_share == 0)
    per_bin = (good_share - bad_share) * np.where(no_cases, 0.0, woe)
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
    iv = _as_number(iv, "iv")
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
    weights = _as_table(table)
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
    goods = _as_counts(goods, "goods")
    bads = _as_counts(bads, "bads")
    _check_same_length(goods, "goods", bads, "bads")
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
    weights = _as_table(table)
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
    goods = _as_counts(good_hist, "good_hist")
    bads = _as_counts(bad_hist, "bad_hist")
    _check_same_length(goods, "good_hist", bads, "bad_hist")
    why = "discrimination needs at least one good and one bad"
    _check_positive_total(goods, "good_hist", why)
    _check_positive_total(bads, "bad_hist", why)
    total_goods, total_bads = goods.sum(), bads.sum()
    cumulative_bads = np.cumsum(bads)
    bads_below = np.concatenate(([0.0], cumulative_bads[:-1]))
    wins = (goods * (bads_below + 0.5 * bads)).sum()
    auc = float(np.clip(wins / (total_goods * total_bads), 0.0, 1.0))
    gap = np.abs(cumulative_bads / total_bads - np.cumsum(goods) / total_goods)
    ks_index = int(np.argmax(gap))
    return Discrimination(auc=auc, gini=2 * auc - 1, ks=float(gap[ks_index]), ks_index=ks_index)


def stability_index(baseline_counts, current_counts, smoothing=0.5):
    """Population / characteristic stability index between two binned samples.

    ``sum (c_i - b_i) ln(c_i / b_i)`` over bins, on shares. When some bin is empty in either
    sample, ``smoothing`` is added to the count of every bin of both samples before shares are
    taken; when no bin is empty nothing is added, so the textbook value is returned exactly.
    The index is symmetric in the two samples.

    Parameters
    ----------
    baseline_counts, current_counts : array_like
        1-d weights per bin, of equal length, each with a positive total.
    smoothing : float, default 0.5
        Added to every cell when some cell is empty. With 0, a bin empty in only one sample
        contributes inf and a bin empty in both contributes 0.

    Returns
    -------
    StabilityIndex

    Examples
    --------
    >>> round(stability_index([50, 30, 20], [40, 30, 30]).total, 4)
    0.0629
    """
    baseline = _as_counts(baseline_counts, "baseline_counts")
    current = _as_counts(current_counts, "current_counts")
    _check_same_length(baseline, "baseline_counts", current, "current_counts")
    why = "a stability index needs a non-empty sample"
    _check_positive_total(baseline, "baseline_counts", why)
    _check_positive_total(current, "current_counts", why)
    smoothing = _check_smoothing(smoothing)
    if np.any((baseline == 0) | (current == 0)):
        baseline = baseline + smoothing
        current = current + smoothing
    baseline_share = baseline / baseline.sum()
    current_share = current / current.sum()
    empty_in_both = (baseline_share == 0) & (current_share == 0)
    log_ratio = np.where(empty_in_both, 0.0, _log_ratio(current_share, baseline_share))
    contributions = (current_share - baseline_share) * log_ratio
    return StabilityIndex(
        total=float(contributions.sum()),
        contributions=contributions,
        baseline_share=baseline_share,
        current_share=current_share,
    )


def stability_critical_value(n_baseline, n_current, n_bins, level=0.95):
    """Critical value of the stability index for samples drawn from one distribution.

    ``(1/N + 1/M) * chi2.ppf(level, n_bins - 1)``: under no change, the index times
    ``1 / (1/N + 1/M)`` is asymptotically chi-square with ``n_bins - 1`` degrees of freedom.

    Parameters
    ----------
    n_baseline, n_current : float
        Sizes N and M of the two samples (positive).
    n_bins : int
        Number of bins, at least 2.
    level : float, default 0.95
        Probability, in (0, 1), that an unchanged population stays below the value.

    Returns
    -------
    float

    Examples
    --------
    >>> round(stability_critical_value(1000, 1000, 10), 4)
    0.0338
    """
    n_baseline = _as_number(n_baseline, "n_baseline")
    n_current = _as_number(n_current, "n_current")
    level = _as_number(level, "level")
    for name, size in (("n_baseline", n_baseline), ("n_current", n_current)):
        if not (math.isfinite(size) and size > 0):
            raise ValueError(f"{name}: must be a positive number, got {size!r}")
    if not (isinstance(n_bins, (int, np.integer)) and n_bins >= 2):
        raise ValueError(f"n_bins: must be an integer >= 2, got {n_bins!r}")
    if not 0 < level < 1:
        raise ValueError(f"level: must lie strictly between 0 and 1, got {level!r}")
    return float((1 / n_baseline + 1 / n_current) * stats.chi2.ppf(level, n_bins - 1))


def stability_status(index, watch=0.10, shift=0.25):
    """Classify a stability index as 'stable', 'watch' or 'shift'.

    Parameters
    ----------
    index : float
        A non-negative stability index (``inf`` allowed).
    watch, shift : float, default 0.10 and 0.25
        Cut-offs, ``0 < watch <= shift``; an index equal to a cut-off reaches that status.

    Returns
    -------
    str

    Examples
    --------
    >>> stability_status(0.1)
    'watch'
    """
    index = _as_number(index, "index")
    watch = _as_number(watch, "watch")
    shift = _as_number(shift, "shift")
    if not index >= 0:
        raise ValueError(f"index: must be a number >= 0, got {index!r}")
    if not 0 < watch <= shift < math.inf:
        raise ValueError(f"watch, shift: need 0 < watch <= shift, got {watch!r}, {shift!r}")
    if index >= shift:
        return "shift"
    if index >= watch:
        return "watch"
    return "stable"


def hosmer_lemeshow(observed_bads, expected_bads, counts):
    """Hosmer-Lemeshow goodness-of-fit test over groups of cases.

    ``sum (O_g - E_g)^2 / (E_g (1 - E_g / n_g))``, referred to a chi-square distribution with
    ``groups - 2`` degrees of freedom.

    Parameters
    ----------
    observed_bads, expected_bads, counts : array_like
        1-d per-group observed bads, predicted bads and group sizes, of equal length (at least
        3 groups). Each group needs ``0 <= O_g <= n_g`` and ``0 < E_g < n_g``.

    Returns
    -------
    HosmerLemeshow

    Examples
    --------
    >>> hosmer_lemeshow([10, 20, 30], [10, 20, 30], [100, 100, 100]).statistic
    0.0
    """
    observed = _as_counts(observed_bads, "observed_bads")
    expected = _as_counts(expected_bads, "expected_bads")
    sizes = _as_counts(counts, "counts")
    _check_same_length(observed, "observed_bads", expected, "expected_bads")
    _check_same_length(observed, "observed_bads", sizes, "counts")
    if sizes.size < 3:
        raise ValueError(f"counts: need at least 3 groups, got {sizes.size}")
    _raise_at_first(observed > sizes, "observed_bads", "must not exceed counts", observed, sizes)
    outside = (expected <= 0) | (expected >= sizes)
    rule = "must lie strictly between 0 and counts"
    _raise_at_first(outside, "expected_bads", rule, expected, sizes)
    statistic = float(((observed - expected) ** 2 / (expected * (sizes - expected) / sizes)).sum())
    dof = sizes.size - 2
    p_value = float(stats.chi2.sf(statistic, dof))
    return HosmerLemeshow(statistic=statistic, dof=dof, p_value=p_value)

