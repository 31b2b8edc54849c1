"""Risk grades: score ranges with a probability of default each, optionally calibrated.

Grades are ranges of the score, grade 1 the lowest risk. Each grade's predicted PD is the
row-weighted mean of the scaling's bad probability over its scores, so a worse grade never has
a lower PD (the probability falls as the score rises). The observed bad rate comes with a
Wilson score interval for a binomial proportion.

Calibration to a long-run average bad rate shifts the intercept: every score's log-odds of bad
moves by one constant ``shift``, found so that the row-weighted mean of the calibrated
probabilities equals the long-run rate. A constant shift keeps the order, so calibrated grades
are never inverted either.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
import pandas as pd
from scipy import optimize, stats

from scorecard.card.points import Scaling
from scorecard.evaluation.histograms import ScoreHistogram, band_edges

CONFIDENCE = 0.95


class Grades(NamedTuple):
    """A grade table and how it was calibrated.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per grade, grade 1 the lowest risk.
    shift : float or None
        Added to every score's log-odds of bad by the calibration (None without it).
    shift_points : float or None
        The same shift in score points (a positive shift in log-odds of bad lowers scores).
    long_run_bad_rate : float or None
    """

    table: pd.DataFrame
    shift: float | None
    shift_points: float | None
    long_run_bad_rate: float | None


def wilson_interval(bads, rows, confidence: float = CONFIDENCE):
    """Wilson score interval of a binomial proportion (vectorised; nan where rows is 0).

    >>> [round(float(v), 4) for v in wilson_interval(10, 100)]
    [0.0552, 0.1744]
    """
    bads, rows = np.asarray(bads, float), np.asarray(rows, float)
    z = stats.norm.ppf(0.5 + confidence / 2)
    with np.errstate(invalid="ignore", divide="ignore"):
        p = bads / rows
        centre = (p + z * z / (2 * rows)) / (1 + z * z / rows)
        half = z / (1 + z * z / rows) * np.sqrt(p * (1 - p) / rows + z * z / (4 * rows * rows))
    return centre - half, centre + half


def log_odds_of_bad(scores, scale: Scaling) -> np.ndarray:
    """ln(bad / good) at each score under the scaling."""
    return -(np.asarray(scores, float) - scale.offset) / scale.factor


def calibration_shift(rows, log_odds, target: float) -> float:
    """The constant added to every log-odds of bad that makes the rows' mean PD ``target``.

    >>> abs(calibration_shift([1, 1], np.log([0.1 / 0.9, 0.3 / 0.7]), 0.2)) < 1e-9
    True
    """
    rows = np.asarray(rows, float)
    weight = rows / rows.sum()

    def gap(shift):
        return float(np.sum(weight / (1 + np.exp(-(log_odds + shift))))) - target

    return float(optimize.brentq(gap, -50.0, 50.0, xtol=1e-14))


def grade_starts(hist: ScoreHistogram, count: int | None = None, edges=None) -> np.ndarray:
    """Lowest score of each grade, ascending: ``count`` grades of about equal shares of the
    rows, or the explicit score ``edges`` (each edge starts a grade)."""
    high = hist.low + len(hist.goods) - 1
    if edges is not None:
        inside = [math.ceil(e) for e in edges if hist.low < math.ceil(e) <= high]
        return np.unique(np.array([hist.low, *inside], dtype=np.int64))
    return band_edges(hist, count)


def grade_table(hist: ScoreHistogram, scale: Scaling, *, count: int | None = None, edges=None,
                long_run_bad_rate: float | None = None) -> Grades:
    """Grades of a sample's score histogram: range, share, PDs and the observed bad rate.

    Examples
    --------
    >>> from scorecard.card.points import scaling
    >>> hist = ScoreHistogram(560, np.array([10., 30, 60, 100]), np.array([5., 5, 3, 2]))
    >>> g = grade_table(hist, scaling(600, 50, 20), count=2, long_run_bad_rate=0.1)
    >>> g.table["Grade"].tolist(), g.table["Lowest score"].tolist()
    ([1, 2], [562, 560])
    >>> round(float((g.table["Share of rows"] * g.table["Calibrated PD"]).sum()), 12)
    0.1
    """
    starts = grade_starts(hist, count, edges)
    scores = hist.scores
    rows_at = hist.goods + hist.bads
    index = np.searchsorted(starts, scores, side="right") - 1
    n = len(starts)
    rows = np.bincount(index, weights=rows_at, minlength=n)
    goods = np.bincount(index, weights=hist.goods, minlength=n)
    bads = np.bincount(index, weights=hist.bads, minlength=n)
    highs = np.append(starts[1:] - 1, scores[-1])
    log_odds = log_odds_of_bad(scores, scale)
    shift = None
    if long_run_bad_rate is not None:
        shift = calibration_shift(rows_at, log_odds, long_run_bad_rate)

    def mean_pd(offset: float) -> np.ndarray:
        pd_at = 1 / (1 + np.exp(-(log_odds + offset)))
        total = np.bincount(index, weights=rows_at * pd_at, minlength=n)
        # An empty grade takes the probability at its middle score, so the order still holds.
        middle = 1 / (1 + np.exp(-(log_odds_of_bad((starts + highs) / 2, scale) + offset)))
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(rows > 0, total / rows, middle)

    low_ci, high_ci = wilson_interval(bads, goods + bads)
    with np.errstate(invalid="ignore", divide="ignore"):
        observed = bads / (goods + bads)
    table = pd.DataFrame({
        "Grade": np.arange(n, 0, -1), "Lowest score": starts, "Highest score": highs,
        "Rows": rows, "Share of rows": rows / rows.sum(), "Goods": goods, "Bads": bads,
        "Predicted PD": mean_pd(0.0), "Observed bad rate": observed,
        "Lower bound (95%)": low_ci, "Upper bound (95%)": high_ci,
        "Calibrated PD": mean_pd(shift) if shift is not None else np.nan,
    }).iloc[::-1].reset_index(drop=True)
    return Grades(table, shift, None if shift is None else -shift * scale.factor,
                  long_run_bad_rate)
