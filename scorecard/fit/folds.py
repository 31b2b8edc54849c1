"""Out-of-sample gain of a characteristic, from folds of the development counts.

Rows that share a pattern (outcome and bin of every candidate) are exchangeable, so a seeded
split of each pattern's count into ``k`` folds by a multinomial draw is a random split of the
rows into ``k`` folds, made on counts alone: no pass over the rows. Each pattern's draw comes
from its own codes and the seed (:mod:`scorecard.measures.fold_split`), so a few changed rows
move only the patterns they touch, and the gains with them, not the whole split. Each fold is held out in
turn: every weight of evidence is estimated afresh on the other folds' counts (with the build's
prior), the model is fitted there, and its log-likelihood is taken on the held fold. The sum
over folds is the model's cross-validated log-likelihood; a characteristic's gain is that of
the model with it minus the model without it. A positive gain means the characteristic
predicts rows it was not estimated on, its bins' weights of evidence included.
"""

from __future__ import annotations

import numpy as np

from scorecard.fit.design import CodedColumns
from scorecard.fit.logistic import SELECTION_TOLERANCE, newton_fit
from scorecard.measures.fold_split import cell_keys, split_counts
from scorecard.measures.information import shrunk_woe

FOLDS = 5

# Without a prior a bin empty of goods or of bads in the training folds would have an infinite
# weight of evidence; one pseudo-row at the overall rate keeps it finite.
_LEAST_PRIOR_ROWS = 1.0


class FoldLikelihood:
    """Cross-validated log-likelihood of models on the WoE-coded candidates.

    Parameters
    ----------
    coded : CodedColumns
        Bin codes of every candidate, one row per pattern of positive weight.
    successes, failures : ndarray of shape (n,)
        Goods and bads of each pattern.
    prior_rows : float
        The prior of the weights of evidence, as the bins were built with.
    seed : int
        Seed of the split. The split does not depend on the order of the patterns.
    folds : int
    refit_woe : bool
        Whether the values of ``coded`` are bins' weights of evidence, to be estimated afresh
        on each fold's training counts; otherwise they are used as they are.
    """

    def __init__(self, coded: CodedColumns, successes, failures, prior_rows: float,
                 seed: int, folds: int = FOLDS, refit_woe: bool = True):
        self.coded, self.folds, self.refit_woe = coded, folds, refit_woe
        self.prior_rows = max(float(prior_rows), _LEAST_PRIOR_ROWS)
        # The goods and the bads of a pattern are two cells, each dealt by its own key.
        self.held = tuple(split_counts(counts, cell_keys(coded.codes, seed, side), folds)
                          for side, counts in enumerate((successes, failures)))
        self.totals = (np.asarray(successes, float), np.asarray(failures, float))
        self._woe: dict = {}
        self._done: dict = {}
        self._groups: dict = {}

    def _train(self, side: int, fold: int) -> np.ndarray:
        # Made when needed rather than kept: on data whose rows are nearly all distinct
        # patterns, a copy per fold would be as large as the held-out counts themselves.
        return self.totals[side] - self.held[side][fold]

    def _grouped(self, columns):
        """Groups of ``columns``, refined from those of the columns before the last, which the
        previous step of forward selection made."""
        if columns not in self._groups:
            head = columns[:-1]
            groups = self.coded.refine(self._groups[head], columns[-1]) \
                if columns and head in self._groups else self.coded.group(columns)
            # Only the model and the latest candidate's groups are kept: an index per row each.
            self._groups = {key: value for key, value in self._groups.items() if key == head}
            self._groups[columns] = groups
        return self._groups[columns]

    def woe(self, fold: int, column: int) -> np.ndarray:
        """Weight of evidence of each bin of ``column`` on the counts outside ``fold`` (or the
        given values, without ``refit_woe``)."""
        key = (fold, column)
        if not self.refit_woe:
            return self.coded.values[column]
        if key not in self._woe:
            codes, radix = self.coded.codes[:, column], self.coded.radix[column]
            goods = np.bincount(codes, weights=self._train(0, fold), minlength=radix)
            bads = np.bincount(codes, weights=self._train(1, fold), minlength=radix)
            with np.errstate(divide="ignore", invalid="ignore"):
                woe = shrunk_woe(goods, bads, goods.sum(), bads.sum(), self.prior_rows)
            self._woe[key] = np.where(goods + bads > 0, woe, 0.0)
        return self._woe[key]

    def log_likelihood(self, columns, start=None) -> float:
        """Held-out log-likelihood (nats) of the model on ``columns``, summed over the folds.

        ``start``: coefficients (intercept first) where each fold's fit starts, such as those of
        the same model on all the rows, which the folds' fits lie close to.
        """
        columns = tuple(columns)
        if columns not in self._done:
            groups = self._grouped(columns)
            first = self.coded.codes[groups.first]
            total = 0.0
            for fold in range(self.folds):
                design = np.empty((groups.count, 1 + len(columns)))
                design[:, 0] = 1.0
                for i, j in enumerate(columns):
                    design[:, 1 + i] = self.woe(fold, j)[first[:, j]]
                held_s, held_f = (
                    np.bincount(groups.index, weights=w[fold], minlength=groups.count)
                    for w in self.held)
                s, f = (np.bincount(groups.index, weights=total, minlength=groups.count) - held
                        for total, held in zip(self.totals, (held_s, held_f)))
                fitted = s + f > 0
                coefficients = newton_fit(design[fitted], s[fitted], f[fitted], start,
                                          SELECTION_TOLERANCE).coefficients
                eta = design @ coefficients
                total -= float(held_s @ np.logaddexp(0.0, -eta) + held_f @ np.logaddexp(0.0, eta))
            self._done[columns] = total
        return self._done[columns]

    def gain(self, columns, candidate: int, start=None) -> float:
        """Held-out log-likelihood of the model with ``candidate`` minus without it (nats).

        ``start``: the coefficients of the model without it, fitted on all the rows.
        """
        columns = tuple(columns)
        with_it = None if start is None else np.append(start, 0.0)
        return self.log_likelihood((*columns, candidate), with_it) \
            - self.log_likelihood(columns, start)
