"""Population stability index between two count vectors, its critical value and status."""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
# scipy.special, not scipy.stats: the same functions that scipy.stats' normal and chi-square
# distributions call, without the second of imports that scipy.stats costs every command.
from scipy import special

from scorecard.constraints import SHIFT, WATCH, cutoffs_in_order
from scorecard.measures.checks import (
    as_counts,
    as_number,
    check_positive_total,
    check_same_length,
    check_smoothing,
    log_ratio,
)


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
    baseline = as_counts(baseline_counts, "baseline_counts")
    current = as_counts(current_counts, "current_counts")
    check_same_length(baseline, "baseline_counts", current, "current_counts")
    why = "a stability index needs a non-empty sample"
    check_positive_total(baseline, "baseline_counts", why)
    check_positive_total(current, "current_counts", why)
    smoothing = check_smoothing(smoothing)
    if np.any((baseline == 0) | (current == 0)):
        baseline = baseline + smoothing
        current = current + smoothing
    baseline_share = baseline / baseline.sum()
    current_share = current / current.sum()
    empty_in_both = (baseline_share == 0) & (current_share == 0)
    log_ratios = np.where(empty_in_both, 0.0, log_ratio(current_share, baseline_share))
    contributions = (current_share - baseline_share) * log_ratios
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
    n_baseline = as_number(n_baseline, "n_baseline")
    n_current = as_number(n_current, "n_current")
    level = as_number(level, "level")
    for name, size in (("n_baseline", n_baseline), ("n_current", n_current)):
        if not (math.isfinite(size) and size > 0):
            raise ValueError(f"{name}: must be a positive number, got {size!r}")
    if not (isinstance(n_bins, (int, np.integer)) and n_bins >= 2):
        raise ValueError(f"n_bins: must be an integer >= 2, got {n_bins!r}")
    if not 0 < level < 1:
        raise ValueError(f"level: must lie strictly between 0 and 1, got {level!r}")
    return float((1 / n_baseline + 1 / n_current) * _chi2_quantile(level, n_bins - 1))


def stability_status(index, watch=WATCH.default, shift=SHIFT.default):
    """Classify a stability index as 'stable', 'watch' or 'shift'.

    Parameters
    ----------
    index : float
        A non-negative stability index (``inf`` allowed).
    watch, shift : float, default 0.10 and 0.25
        Cut-offs, ``0 < watch < shift``; an index equal to a cut-off reaches that status.

    Returns
    -------
    str

    Examples
    --------
    >>> stability_status(0.1)
    'watch'
    """
    index = as_number(index, "index")
    watch = as_number(watch, "watch")
    shift = as_number(shift, "shift")
    if not index >= 0:
        raise ValueError(f"index: must be a number >= 0, got {index!r}")
    if not cutoffs_in_order(watch, shift):
        raise ValueError(f"watch, shift: need 0 < watch < shift, got {watch!r}, {shift!r}")
    if index >= shift:
        return "shift"
    if index >= watch:
        return "watch"
    return "stable"


def _chi2_quantile(level: float, dof: int) -> float:
    """Quantile of the chi-square distribution, as ``scipy.stats.chi2.ppf`` computes it."""
    return 2.0 * float(special.gammaincinv(dof / 2, level))
