"""Observed against expected bads: the Hosmer-Lemeshow test over groups."""

from __future__ import annotations

from typing import NamedTuple

# scipy.special, not scipy.stats: the same functions that scipy.stats' normal and chi-square
# distributions call, without the second of imports that scipy.stats costs every command.
from scipy import special

from scorecard.measures.checks import as_counts, check_same_length, raise_at_first


class HosmerLemeshow(NamedTuple):
    """Hosmer-Lemeshow goodness-of-fit test result."""

    statistic: float
    dof: int
    p_value: float


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
    observed = as_counts(observed_bads, "observed_bads")
    expected = as_counts(expected_bads, "expected_bads")
    sizes = as_counts(counts, "counts")
    check_same_length(observed, "observed_bads", expected, "expected_bads")
    check_same_length(observed, "observed_bads", sizes, "counts")
    if sizes.size < 3:
        raise ValueError(f"counts: need at least 3 groups, got {sizes.size}")
    raise_at_first(observed > sizes, "observed_bads", "must not exceed counts", observed, sizes)
    outside = (expected <= 0) | (expected >= sizes)
    rule = "must lie strictly between 0 and counts"
    raise_at_first(outside, "expected_bads", rule, expected, sizes)
    statistic = float(((observed - expected) ** 2 / (expected * (sizes - expected) / sizes)).sum())
    dof = sizes.size - 2
    p_value = float(special.chdtrc(dof, statistic))
    return HosmerLemeshow(statistic=statistic, dof=dof, p_value=p_value)
