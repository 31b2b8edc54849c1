"""How many bins a characteristic gets: the limit whose bins best predict rows they were not
built on, judged on folds of the fine-class counts.

More bins always raise the information value on the rows that chose them, so the value alone
cannot say when to stop: a strong characteristic with a long tail wants more than a fixed limit
allows, a weak one fewer. Rows of one fine class and outcome are exchangeable, so dealing each
fine class's goods and bads into folds (:mod:`scorecard.measures.fold_split`, each cell from
its own hashed key) is a random split of the rows, made on counts alone. For each fold held
out in turn, the exact optimal binning for every limit is found on the other folds; each
bin's weight of evidence, shrunk by the build's prior, gives the odds of every fine class in
it, and the held fold's rows are scored by them (binomial log-likelihood, nats). The limit
chosen is the one whose summed held-out log-likelihood is highest (the fewest bins on a tie),
and the final bins are the exact optimum for that limit on all the development counts.

A build chooses so with ``binning.choose_max_bins: true``; by default every characteristic
takes ``binning.max_bins``, since on the quality benchmark the choice moved the held-out AUC by
no more than the splits' noise overall and cost one small data set clearly at one split
(:data:`scorecard.constraints.CHOOSE_MAX_BINS` has the figures).
"""

from __future__ import annotations

import zlib
from typing import Callable, NamedTuple

import numpy as np

from scorecard.measures.fold_split import cell_keys, split_counts
from scorecard.measures.information import shrunk_woe

# Without a prior, a bin of the training folds always holds goods and bads (the optimiser
# requires it); a held-out fine class may still fall in a bin the single-bin fallback makes
# one-sided, which a small pseudo-count keeps finite.
_LEAST_PRIOR_ROWS = 1e-6


class BinCountChoice(NamedTuple):
    """The limit on the number of bins chosen for one characteristic, and the evidence.

    Attributes
    ----------
    bins : int
        The chosen limit (the final bins are the optimum with at most this many).
    limits : tuple of int
        The limits compared, from 2 up.
    held_out : numpy.ndarray
        Held-out log-likelihood (nats) of each limit, summed over the folds.
    standard_error : numpy.ndarray
        Standard error of each limit's difference from the best, from its spread across folds.
    best : int
        The limit of highest held-out log-likelihood.
    """

    bins: int
    limits: tuple[int, ...]
    held_out: np.ndarray
    standard_error: np.ndarray
    best: int

    def reason(self, found: int) -> str:
        """A short sentence for the reviewer: ``found`` is the number of bins the final
        optimum has (it can be fewer than the limit when more do not raise the IV)."""
        folds_note = f"held-out log-likelihood on folds, limits {self.limits[0]} to " \
                     f"{self.limits[-1]} compared"
        if self.bins == self.best:
            return f"{found} bins: limit {self.bins} scored best ({folds_note})"
        return (f"{found} bins: limit {self.bins}, the fewest within the folds' noise of the "
                f"best (limit {self.best}; {folds_note})")


def characteristic_seed(seed: int, name: str) -> int:
    """The seed of one characteristic's folds: the build's seed mixed with its name, so that
    two characteristics never share their draws and adding a column moves no other's folds.

    Examples
    --------
    >>> characteristic_seed(7, "age") == characteristic_seed(7, "age"), \\
    ...     characteristic_seed(7, "age") == characteristic_seed(7, "income")
    (True, False)
    """
    return (int(seed) << 32) ^ zlib.crc32(name.encode("utf-8"))


def held_out_log_likelihoods(goods, bads, cells, fit: Callable, seed: int, folds: int,
                             prior_rows: float, other_goods: float = 0.0,
                             other_bads: float = 0.0) -> np.ndarray:
    """Held-out log-likelihood of each limit's bins, per fold: shape ``(folds, limits)``.

    Parameters
    ----------
    goods, bads : array_like of shape (n,)
        Development counts of the fine classes.
    cells : array_like of int, shape (n,) or (n, m)
        A key of each fine class that does not depend on the others (such as the first grid
        cell it holds, or a hash of its label): its goods and bads are dealt by it.
    fit : callable
        ``fit(train_goods, train_bads, total_goods, total_bads)`` returns, for every limit in
        order, the bin of each fine class (an int array of shape (n,)); totals include the
        classes kept apart (missing values, sentinels).
    seed : int
        Seed of the folds (see :func:`characteristic_seed`).
    folds : int
    prior_rows : float
        The prior of the weights of evidence, as the build uses it.
    other_goods, other_bads : float
        Goods and bads of the characteristic outside these fine classes (missing values,
        sentinels), dealt into the folds in proportion, for the overall rate of each fold.
    """
    goods = np.asarray(goods, dtype=float)
    bads = np.asarray(bads, dtype=float)
    held_goods = split_counts(goods, cell_keys(cells, seed, 0), folds)
    held_bads = split_counts(bads, cell_keys(cells, seed, 1), folds)
    prior = max(float(prior_rows), _LEAST_PRIOR_ROWS)
    share = (folds - 1) / folds
    scores = []
    for fold in range(folds):
        train_goods, train_bads = goods - held_goods[fold], bads - held_bads[fold]
        total_goods = train_goods.sum() + share * other_goods
        total_bads = train_bads.sum() + share * other_bads
        row = []
        for bin_of in fit(train_goods, train_bads, total_goods, total_bads):
            radix = int(bin_of.max()) + 1
            g = np.bincount(bin_of, weights=train_goods, minlength=radix)
            b = np.bincount(bin_of, weights=train_bads, minlength=radix)
            # Log-odds of good in each bin: the overall odds times exp(WoE), WoE shrunk.
            with np.errstate(divide="ignore", invalid="ignore"):
                log_odds = np.log(total_goods / total_bads) + shrunk_woe(
                    g, b, total_goods, total_bads, prior)
            eta = np.where(g + b > 0, log_odds, np.log(total_goods / total_bads))[bin_of]
            row.append(-float(held_goods[fold] @ np.logaddexp(0.0, -eta)
                              + held_bads[fold] @ np.logaddexp(0.0, eta)))
        scores.append(row)
    return np.array(scores)


def choose_bin_count(per_fold: np.ndarray, limits, standard_errors: float = 0.0
                     ) -> BinCountChoice:
    """The fewest bins within ``standard_errors`` standard errors of the best held-out
    log-likelihood (0, the default: the best itself, the fewest bins on a tie).

    ``per_fold``: shape ``(folds, len(limits))``, from :func:`held_out_log_likelihoods`.
    The standard error of a limit is that of the sum over folds of its paired difference
    from the best limit: the folds' common noise (some folds are simply harder) cancels.
    Measured on the quality benchmark, the one-standard-error rule (1) took too few bins:
    it lost ranking on more data sets than it gained, so the default takes the best.

    Examples
    --------
    >>> per_fold = np.array([[-50.0, -48.0, -47.5], [-52.0, -49.0, -49.1]])
    >>> choose_bin_count(per_fold, (2, 3, 4)).bins
    4
    >>> choose_bin_count(per_fold, (2, 3, 4), standard_errors=1.0).bins
    3
    """
    per_fold = np.asarray(per_fold, dtype=float)
    limits = tuple(int(k) for k in limits)
    totals = per_fold.sum(axis=0)
    top = int(np.argmax(totals))            # the first of equal maxima: the fewest bins
    gaps = per_fold[:, [top]] - per_fold
    folds = per_fold.shape[0]
    spread = np.sqrt(folds * gaps.var(axis=0, ddof=1)) if folds > 1 else np.zeros(len(limits))
    within = totals >= totals[top] - standard_errors * spread
    chosen = int(np.argmax(within))
    return BinCountChoice(limits[chosen], limits, totals, spread, limits[top])
