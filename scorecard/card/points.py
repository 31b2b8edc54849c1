"""Scaling of a logistic scorecard to integer points.

A score is a linear function of the log-odds of good: ``score = offset + factor * ln(odds)``,
with ``factor = pdo / ln 2`` and ``offset = base_score - factor * ln(base_odds)``. The intercept
is spread evenly over the characteristics so that every attribute carries its own whole points.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np


class Scaling(NamedTuple):
    """Constants that turn log-odds of good into points."""

    base_score: float
    base_odds: float
    pdo: float
    factor: float
    offset: float


def scaling(base_score: float, base_odds: float, pdo: float) -> Scaling:
    """Factor and offset for a score of ``base_score`` at good:bad odds ``base_odds``.

    Parameters
    ----------
    base_score : float
        Score given to an applicant whose good:bad odds equal ``base_odds``.
    base_odds : float
        Good:bad odds at the base score; must be positive.
    pdo : float
        Points to double the odds; must be positive.

    Examples
    --------
    >>> s = scaling(600, 50, 20)
    >>> round(s.factor, 4), round(s.offset, 4)
    (28.8539, 487.1229)
    """
    if not (base_odds > 0 and pdo > 0):
        raise ValueError("base_odds and pdo must be positive")
    factor = pdo / math.log(2)
    return Scaling(float(base_score), float(base_odds), float(pdo), factor,
                   base_score - factor * math.log(base_odds))


def score_of_odds(odds, scale: Scaling):
    """Score at the given good:bad odds (vectorised)."""
    return scale.offset + scale.factor * np.log(odds)


def odds_of_score(score, scale: Scaling):
    """Good:bad odds at the given score (vectorised)."""
    return np.exp((np.asarray(score, dtype=float) - scale.offset) / scale.factor)


def bad_probability_of_score(score, scale: Scaling):
    """Probability of bad at the given score: 1 / (1 + odds)."""
    return 1.0 / (1.0 + odds_of_score(score, scale))


class AttributePoints(NamedTuple):
    """Points of every attribute of one characteristic."""

    points: np.ndarray   # integers
    exact: np.ndarray    # before rounding


def attribute_points(woe, coefficient: float, intercept: float, n_characteristics: int,
                     scale: Scaling) -> AttributePoints:
    """Points of each attribute: ``(beta * woe + alpha / k) * factor + offset / k``, rounded.

    Examples
    --------
    >>> s = scaling(600, 50, 20)
    >>> attribute_points([0.5, -0.5], 1.0, 2.0, 2, s).points.tolist()
    [287, 258]
    """
    exact = (coefficient * np.asarray(woe, dtype=float) + intercept / n_characteristics) \
        * scale.factor + scale.offset / n_characteristics
    return AttributePoints(np.rint(exact).astype(np.int64), exact)


def largest_rounding_change(exact_by_characteristic) -> float:
    """The largest change of any attainable score that rounding each attribute causes.

    For each characteristic the rounding error of its attributes lies in a range; a score picks
    one attribute per characteristic, so the largest total change is the larger of the summed
    maxima and the summed minima in absolute value.
    """
    errors = [np.rint(e) - e for e in exact_by_characteristic if len(e)]
    if not errors:
        return 0.0
    high = sum(float(e.max()) for e in errors)
    low = sum(float(e.min()) for e in errors)
    return max(abs(high), abs(low))
