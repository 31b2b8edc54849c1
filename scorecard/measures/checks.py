"""Validation of the count arrays every measure takes: one ValueError naming the argument and entry."""

from __future__ import annotations

import math

import numpy as np


def as_counts(values, name):
    """Return ``values`` as a 1-d float array of finite, non-negative counts."""
    try:
        counts = np.asarray(values, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name}: must be an array of numbers ({exc})") from None
    if counts.ndim != 1:
        raise ValueError(f"{name}: must be 1-dimensional, got {counts.ndim} dimensions")
    if counts.size == 0:
        raise ValueError(f"{name}: must not be empty")
    check_finite_non_negative(counts, name)
    return counts


def check_finite_non_negative(array, name):
    rules = ((~np.isfinite(array), "must be finite"), (array < 0, "must not be negative"))
    for failed, rule in rules:
        bad = np.flatnonzero(failed)
        if bad.size:
            index = np.unravel_index(bad[0], array.shape)
            where = ", ".join(str(int(i)) for i in index)
            raise ValueError(f"{name}[{where}]: {rule}, got {array[index]}")


def raise_at_first(failed, name, rule, values, sizes):
    bad = np.flatnonzero(failed)
    if bad.size:
        i = bad[0]
        raise ValueError(f"{name}[{i}]: {rule}[{i}] = {sizes[i]}, got {values[i]}")


def check_same_length(first, first_name, second, second_name):
    if first.size != second.size:
        raise ValueError(
            f"{first_name} and {second_name}: must have the same length, "
            f"got {first.size} and {second.size}"
        )


def check_positive_total(counts, name, why):
    if not counts.sum() > 0:
        raise ValueError(f"{name}: total is zero; {why}")


def as_number(value, name):
    try:
        return float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: must be a number, got {value!r}") from None


def check_smoothing(smoothing):
    smoothing = as_number(smoothing, "smoothing")
    if not (math.isfinite(smoothing) and smoothing >= 0):
        raise ValueError(f"smoothing: must be a finite number >= 0, got {smoothing!r}")
    return smoothing


def as_table(table):
    """Return ``table`` as a 2-d float array of finite, non-negative weights with a positive sum."""
    try:
        weights = np.asarray(table, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"table: must be an array of numbers ({exc})") from None
    if weights.ndim != 2:
        raise ValueError(f"table: must be 2-dimensional, got {weights.ndim} dimensions")
    if weights.size == 0:
        raise ValueError("table: must not be empty")
    check_finite_non_negative(weights, "table")
    check_positive_total(weights, "table", "a contingency table needs some weight")
    return weights


def log_ratio(numerator, denominator):
    """``ln(numerator / denominator)`` with ±inf for one zero side and nan for both, silently."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(numerator) - np.log(denominator)
