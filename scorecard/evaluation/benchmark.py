"""The cost of the scorecard form: the card's AUC beside a plain logistic regression.

A validator asks how much ranking the points table gives up against an unconstrained model on
the same columns. The benchmark is a logistic regression on the raw columns that the build
classed: numbers with missing values and sentinels set to the development median, then
standardised; categories one-hot, missing as a level of its own. Like scikit-learn's default,
it carries a unit ridge penalty on the coefficients (not the intercept), which keeps it finite
when a rare level separates the outcome.

It is fitted on at most :data:`ROW_CAP` development rows and compared with the card on at most
``ROW_CAP`` holdout rows (development rows without a holdout), both drawn at random with the
build's seed: one extra pass reads only those rows' values, so the build stays fast however
long the file is.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.binning.fine import NumericLayout
from scorecard.card.scoring import apply_scorecard
from scorecard.data.coding import categorical_codes, numeric_values
from scorecard.data.outcome import BAD, GOOD
from scorecard.data.samples import DEVELOPMENT, EXCLUDED, HOLDOUT
from scorecard.engines.passes import RowFacts
from scorecard.fit.logistic import penalised_fit

ROW_CAP = 20_000


class Benchmark(NamedTuple):
    """Held-out AUC of the card and of the benchmark regression, on the same rows.

    ``sample`` names the rows compared (``'holdout'``, or ``'development'`` when there is no
    holdout); ``fitted`` and ``compared`` are the numbers of rows used.
    """

    sample: str
    fitted: int
    compared: int
    card_auc: float
    logistic_auc: float


def chosen_rows(rows: RowFacts, seed: int, cap: int = ROW_CAP) -> RowFacts:
    """The per-row facts with every row but a random ``cap`` of each sample excluded.

    Examples
    --------
    >>> rows = RowFacts(np.zeros(10, np.int8), np.ones(10), np.zeros(10, np.int8))
    >>> int((chosen_rows(rows, 1, cap=3).sample == DEVELOPMENT).sum())
    3
    """
    draw = np.random.default_rng(seed).random(len(rows.sample))
    sample = np.full(len(rows.sample), EXCLUDED, dtype=np.int8)
    for code in (DEVELOPMENT, HOLDOUT):
        members = np.flatnonzero(rows.sample == code)
        sample[_smallest(members, draw[members], cap)] = code
    return RowFacts(rows.label, rows.weight, sample)


def _smallest(members: np.ndarray, draw: np.ndarray, cap: int) -> np.ndarray:
    """The ``cap`` members of smallest draw, ties going to the earlier member: the first
    ``cap`` of a stable sort by draw, found by one partition instead of a sort of them all.

    Examples
    --------
    >>> _smallest(np.arange(5), np.array([0.5, 0.1, 0.5, 0.9, 0.5]), 3).tolist()
    [0, 1, 2]
    """
    if cap >= len(members):
        return members
    threshold = np.partition(draw, cap - 1)[cap - 1]
    below = draw < threshold
    at = np.flatnonzero(draw == threshold)[: cap - int(below.sum())]
    return members[np.sort(np.concatenate([np.flatnonzero(below), at]))]


def raw_rows(frame: pd.DataFrame, rows: RowFacts, columns) -> tuple[pd.DataFrame, RowFacts]:
    """The chosen rows of one chunk: their values and their facts (a pass over the rows)."""
    keep = rows.sample != EXCLUDED
    return (frame.loc[keep, list(columns)].reset_index(drop=True),
            RowFacts(rows.label[keep], rows.weight[keep], rows.sample[keep]))


def merge_raw(a, b):
    return (pd.concat([a[0], b[0]], ignore_index=True),
            RowFacts(*(np.concatenate([x, y]) for x, y in zip(a[1], b[1]))))


def raw_design(frame: pd.DataFrame, layouts: dict, fitted: np.ndarray) -> np.ndarray:
    """Design of the benchmark regression; medians, scales and levels from the ``fitted`` rows.

    Examples
    --------
    >>> frame = pd.DataFrame({"x": [1.0, 3.0, None], "k": ["a", "b", None]})
    >>> layouts = {"x": NumericLayout(np.array([2.0]), ()), "k": ("a", "b")}
    >>> raw_design(frame, layouts, np.array([True, True, True])).round(3).tolist()
    [[-1.225, 0.0, 0.0], [1.225, 1.0, 0.0], [0.0, 0.0, 1.0]]
    """
    blocks = []
    for name, layout in layouts.items():
        if isinstance(layout, NumericLayout):
            x = numeric_values(frame[name], name).copy()
            for value in layout.sentinels:
                x[x == value] = np.nan
            # Values beyond the fitted rows' finite range (infinities too) count as its ends,
            # as the card's end bins take them; so do the few values far beyond the rest that
            # the layout sets apart (two of 1e308 would overflow the mean and the spread).
            below, above = layout.extreme
            finite = x[fitted & (x >= below) & (x <= above) & np.isfinite(x)]
            if len(finite):
                x = np.clip(x, finite.min(), finite.max())
            known = x[fitted & ~np.isnan(x)]
            centre = float(np.median(known)) if len(known) else 0.0
            x = np.where(np.isnan(x), centre, x)
            spread = float(np.std(x[fitted]))
            blocks.append(((x - x[fitted].mean()) / (spread if spread > 0 else 1.0))[:, None])
        else:
            codes = categorical_codes(frame[name], layout)
            codes = np.where(codes == -1, len(layout), codes)     # missing: a level of its own
            seen = np.bincount(codes[fitted & (codes >= 0)], minlength=len(layout) + 1)
            # The most frequent level is the reference; levels never seen in fitting add nothing.
            levels = [c for c in np.flatnonzero(seen) if c != int(np.argmax(seen))]
            blocks.append((codes[:, None] == np.array(levels)[None, :]).astype(float))
    return np.hstack(blocks) if blocks else np.empty((len(frame), 0))


def weighted_auc(risk: np.ndarray, bad: np.ndarray, weight: np.ndarray) -> float:
    """Probability that a random bad ranks riskier than a random good (ties count half).

    Examples
    --------
    >>> weighted_auc(np.array([1.0, 2, 2, 3]), np.array([False, True, False, True]), np.ones(4))
    0.875
    """
    values, index = np.unique(risk, return_inverse=True)
    bads = np.bincount(index, weights=weight * bad, minlength=len(values))
    goods = np.bincount(index, weights=weight * ~bad, minlength=len(values))
    below = np.cumsum(goods) - goods
    total = bads.sum() * goods.sum()
    return float((bads * (below + 0.5 * goods)).sum() / total) if total > 0 else float("nan")


def benchmark(engine, rows: RowFacts, card, layouts: dict, seed: int) -> Benchmark | None:
    """Fit the benchmark regression and compare it with the card; None without goods and bads."""
    frame, facts = engine.reduce(raw_rows, merge_raw, chosen_rows(rows, seed), list(layouts),
                                 columns=list(layouts))
    fitted = facts.sample == DEVELOPMENT
    compared = facts.sample == HOLDOUT
    name = "holdout"
    if not compared.any():
        compared, name = fitted, "development"
    design = raw_design(frame, layouts, fitted)
    bad = facts.label == BAD
    good = facts.label == GOOD
    s = np.where(fitted & bad, facts.weight, 0.0)
    f = np.where(fitted & good, facts.weight, 0.0)
    if s.sum() <= 0 or f.sum() <= 0:
        return None
    coefficients = penalised_fit(design[fitted], s[fitted], f[fitted], 1.0)
    risk = coefficients[0] + design[compared] @ coefficients[1:]
    scores = apply_scorecard(card, frame.loc[compared].reset_index(drop=True))
    w = facts.weight[compared]
    return Benchmark(name, int(fitted.sum()), int(compared.sum()),
                     weighted_auc(-scores.score.astype(float), bad[compared], w),
                     weighted_auc(risk, bad[compared], w))
