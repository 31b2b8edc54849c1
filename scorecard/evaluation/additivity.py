"""Pairs of the card's characteristics whose joint bins the card's added points do not fit.

A scorecard adds points: a bin of one characteristic is worth the same whatever the bin of
another. Where the trend of one depends on the bin of the other (the bad rate rises with a
balance for applicants who paid late and falls for those who did not), no choice of points
can hold it, and a model free of that form will rank better. For each pair of characteristics
of which at least one is in the card, the development rows are grouped into cells (bin of the first, bin of the
second). With the card's own log-odds as they stand, every cell has a score (goods found
minus goods expected) and an information (the binomial variance); the score statistic of free
cell effects, less the part that letting each characteristic's bins move on their own would
take (what new points within the additive form could do), is the departure from additivity.

Under additivity it is about chi-square with ``cells - rank of the two main effects`` degrees
of freedom (cells of fewer than five expected goods or bads sit out); the card's other terms are held at their fitted values, so it is a screen, not an
exact test. ``(statistic - df) / 2`` nats, per row, estimates the gain in log-likelihood a
model with the pair's cells free would make on new rows; a segmented card on the
characteristic with fewer bins is the remedy the product offers (``segments``).

Counts only: the pattern table the build already has, two sums per pair.
"""

from __future__ import annotations

from itertools import combinations
from typing import NamedTuple

import numpy as np
from scipy import special


# Least information of a cell that takes part: with it, the cell expects at least this many
# goods and this many bads (the usual floor of five expected counts for a chi-square).
MIN_CELL_INFORMATION = 5.0


class PairDeparture(NamedTuple):
    """How far the card's added points miss the joint bins of two characteristics.

    ``segment_on`` is the one of the two with fewer bins (the first on a tie): the column a
    segmented card would split on.
    """

    first: str
    second: str
    statistic: float
    df: int
    p_value: float
    gain_per_row: float
    segment_on: str


def pair_departure(first: np.ndarray, second: np.ndarray, radix: tuple[int, int],
                   residual: np.ndarray, information: np.ndarray) -> tuple[float, int]:
    """Score statistic of a pair's cell effects beyond its main effects, and its df.

    ``first`` and ``second`` are the bin codes of each row (or pattern), ``residual`` its
    goods minus expected goods, ``information`` its binomial variance, at the card's
    log-odds.

    Examples
    --------
    >>> a, b = np.array([0, 0, 1, 1]), np.array([0, 1, 0, 1])
    >>> pair_departure(a, b, (2, 2), np.array([6.0, -6.0, -6.0, 6.0]), np.full(4, 9.0))
    (16.0, 1)
    """
    cell = first * radix[1] + second
    occupied = np.bincount(cell, weights=information, minlength=radix[0] * radix[1])
    score = np.bincount(cell, weights=residual, minlength=radix[0] * radix[1])
    # A chi-square screen needs cells that are not sparse: a cell of few expected goods or
    # bads gives a heavy-tailed term. Its information bounds both (it is at most the
    # expected goods and at most the expected bads), so cells below the bound sit out.
    seen = occupied >= MIN_CELL_INFORMATION
    whole = float(np.sum(score[seen] ** 2 / occupied[seen]))
    # The main effects: a free shift for each bin of either characteristic, on the same
    # cells. Their information matrix is made of the cells' information alone.
    table = np.where(seen, occupied, 0.0).reshape(radix)
    scores = np.where(seen, score, 0.0).reshape(radix)
    information_matrix = np.block([[np.diag(table.sum(axis=1)), table],
                                   [table.T, np.diag(table.sum(axis=0))]])
    main_score = np.concatenate([scores.sum(axis=1), scores.sum(axis=0)])
    main = float(main_score @ np.linalg.pinv(information_matrix) @ main_score)
    rank = int(np.linalg.matrix_rank(information_matrix))
    return max(whole - main, 0.0), int(np.count_nonzero(seen)) - rank


def additivity_check(codes: np.ndarray, radix, names, successes, failures,
                     log_odds, among=None) -> tuple[PairDeparture, ...]:
    """Every pair of characteristics, the largest departure first.

    Parameters
    ----------
    codes : ndarray of int, shape (n, k)
        Bin code of each pattern (or row) in each of the card's ``k`` characteristics.
    radix : sequence of int
        Number of bins of each characteristic.
    names : sequence of str
    successes, failures : ndarray of shape (n,)
        Goods and bads of each pattern.
    log_odds : ndarray of shape (n,)
        The card's log-odds of good for each pattern.
    among : collection of str, optional
        Only pairs with at least one of these (the card's characteristics; the other may be
        a candidate left out, whose interaction the card cannot hold either). Default: all.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> a, b = rng.integers(2, size=20_000), rng.integers(3, size=20_000)
    >>> truth = 1.0 + 0.8 * a * (b - 1)                    # b's trend turns with a
    >>> good = rng.random(20_000) < special.expit(truth)
    >>> codes = np.column_stack([a, b])
    >>> fitted = np.full(20_000, np.log(good.mean() / (1 - good.mean())))
    >>> top = additivity_check(codes, (2, 3), ("paid_late", "balance"), good * 1.0,
    ...                        ~good * 1.0, fitted)[0]
    >>> top.segment_on, top.df, top.p_value < 1e-6
    ('paid_late', 2, True)
    """
    codes = np.asarray(codes)
    successes, failures = np.asarray(successes, float), np.asarray(failures, float)
    good = special.expit(np.asarray(log_odds, float))
    rows = successes + failures
    residual = successes - rows * good
    information = rows * good * (1.0 - good)
    total = float(rows.sum())
    # One contiguous array of small codes per characteristic: the pairs' cell numbers are
    # then made without gathering strided columns again for every pair.
    columns = [np.ascontiguousarray(codes[:, j], dtype=np.int32) for j in range(codes.shape[1])]
    out = []
    for i, j in combinations(range(codes.shape[1]), 2):
        if among is not None and names[i] not in among and names[j] not in among:
            continue
        statistic, df = pair_departure(columns[i], columns[j], (radix[i], radix[j]),
                                       residual, information)
        if df <= 0:
            continue
        p_value = float(special.chdtrc(df, statistic))  # chi-square survival
        gain = (statistic - df) / 2.0 / total if total > 0 else 0.0
        segment_on = names[j] if radix[j] < radix[i] else names[i]
        out.append(PairDeparture(names[i], names[j], statistic, df, p_value, gain, segment_on))
    return tuple(sorted(out, key=lambda d: (-d.gain_per_row, d.first, d.second)))


# The build's screen sums over at most this many development patterns (a seeded random choice
# of them beyond it): two sums per pair over a million distinct patterns would cost more than
# the screen's power needs.
MAX_PATTERNS = 200_000

# Family-wise level of the screen: a pair is notable when its p-value is below this level
# divided by the number of pairs screened (Bonferroni), so that with no departure anywhere
# the whole list stays empty in about 95% of builds however many pairs there are.
LEVEL = 0.05


def notable(departures, level: float = LEVEL) -> tuple[PairDeparture, ...]:
    """The pairs that depart from additivity beyond chance, the largest departure first.

    Examples
    --------
    >>> pairs = (PairDeparture("a", "b", 40.0, 2, 2e-9, 0.01, "a"),
    ...          PairDeparture("a", "c", 3.0, 2, 0.22, 0.0, "a"))
    >>> [p.second for p in notable(pairs)]
    ['b']
    """
    if not departures:
        return ()
    bound = level / len(departures)
    return tuple(d for d in departures if d.p_value < bound and d.gain_per_row > 0)


def departures_frame(departures):
    """The pairs as a table, as the workbook shows them."""
    import pandas as pd
    return pd.DataFrame({
        "Characteristic": [d.first for d in departures],
        "With": [d.second for d in departures],
        "Score statistic": [d.statistic for d in departures],
        "Degrees of freedom": [d.df for d in departures],
        "p-value": [d.p_value for d in departures],
        "Gain per 1,000 rows (nats)": [1000 * d.gain_per_row for d in departures],
        "A segmented card would split on": [d.segment_on for d in departures],
    })
