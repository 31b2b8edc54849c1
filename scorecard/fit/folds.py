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
from scorecard.fit.logistic import RowSums, newton_fit
from scorecard.measures.fold_split import cell_keys, split_counts
from scorecard.measures.information import shrunk_woe

FOLDS = 5

# Without a prior a bin empty of goods or of bads in the training folds would have an infinite
# weight of evidence; one pseudo-row at the overall rate keeps it finite.
_LEAST_PRIOR_ROWS = 1.0

# A fold's fit stops after a step of 1e-5 (relative). Newton's method is then in its quadratic
# range, so the coefficients end within about 1e-10 of the fold's optimum, and the held-out
# log-likelihood, whose gradient there is of the order of the square root of the held rows,
# moves by far less than a thousandth of a nat; the pass a step of 1e-7 would cost is saved.
_FOLD_TOLERANCE = 1e-5

# Grouping rows by their codes pays while the groups are far fewer than the rows; past this
# share the folds' fits run on the rows (the patterns of all candidates) themselves.
_UNGROUPED_SHARE = 0.5


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
        self._spread: list = []   # column sets whose groups are hardly fewer than the rows

    def _train(self, side: int, fold: int) -> np.ndarray:
        # Made when needed rather than kept: on data whose rows are nearly all distinct
        # patterns, a copy per fold would be as large as the held-out counts themselves.
        return self.totals[side] - self.held[side][fold]

    def _grouped(self, columns):
        """Groups of ``columns``, refined from those of the columns before the last, which the
        previous step of forward selection made; None where groups would hardly be fewer than
        the rows, and the fits run on the rows themselves."""
        if any(known <= set(columns) for known in self._spread):
            return None
        if columns not in self._groups:
            head = columns[:-1]
            groups = self.coded.refine(self._groups[head], columns[-1]) \
                if columns and head in self._groups else self.coded.group(columns)
            # Only the model and the latest candidate's groups are kept: an index per row each.
            self._groups = {key: value for key, value in self._groups.items() if key == head}
            if groups.count > _UNGROUPED_SHARE * self.coded.n_rows:
                # Refining only splits groups further: every set holding these is as spread.
                self._spread.append(frozenset(columns))
                return None
            self._groups[columns] = groups
        return self._groups[columns]

    def woe(self, fold: int, column: int) -> np.ndarray:
        """Weight of evidence of each bin of ``column`` on the counts outside ``fold`` (or the
        given values, without ``refit_woe``)."""
        if not self.refit_woe:
            return self.coded.values[column]
        if fold not in self._woe:
            # Every column's table of the fold at once: the training counts are made once.
            goods, bads = self._train(0, fold), self._train(1, fold)
            tables = []
            for j, radix in enumerate(self.coded.radix):
                codes = self.coded.codes[:, j]
                g = np.bincount(codes, weights=goods, minlength=radix)
                b = np.bincount(codes, weights=bads, minlength=radix)
                with np.errstate(divide="ignore", invalid="ignore"):
                    woe = shrunk_woe(g, b, g.sum(), b.sum(), self.prior_rows)
                tables.append(np.where(g + b > 0, woe, 0.0))
            self._woe[fold] = tables
        return self._woe[fold][column]

    def fold_log_likelihoods(self, columns, start=None) -> np.ndarray:
        """Held-out log-likelihood (nats) of the model on ``columns`` in each fold.

        ``start``: coefficients (intercept first) where each fold's fit starts, such as those of
        the same model on all the rows, which the folds' fits lie close to.
        """
        columns = tuple(columns)
        if columns not in self._done:
            groups = self._grouped(columns)
            figures = np.empty(self.folds)
            information = None
            # On the rows, one design serves every fold in turn, refilled with its weights of
            # evidence.
            design = None if groups is not None else \
                np.empty((self.coded.n_rows, 1 + len(columns)), order="F")
            for fold in range(self.folds):
                # The folds' optima lie closer to one another than to the fit on all the rows
                # (each fold's weights of evidence come from most of the same rows): each fold
                # after the first starts where the one before it ended, with its information
                # matrix for the first step, which spares that step's weighted cross product.
                figures[fold], start, information = \
                    self._on_rows(columns, design, fold, start, information) if groups is None \
                    else self._on_groups(columns, groups, fold, start, information)
            self._done[columns] = figures
        return self._done[columns]

    def log_likelihood(self, columns, start=None) -> float:
        """Held-out log-likelihood (nats) of the model on ``columns``, summed over the folds."""
        return float(self.fold_log_likelihoods(columns, start).sum())

    def _on_groups(self, columns, groups, fold: int, start, information):
        first = self.coded.codes[groups.first]
        design = np.empty((groups.count, 1 + len(columns)))
        design[:, 0] = 1.0
        for i, j in enumerate(columns):
            design[:, 1 + i] = self.woe(fold, j)[first[:, j]]
        held_s, held_f = (np.bincount(groups.index, weights=w[fold], minlength=groups.count)
                          for w in self.held)
        s, f = (np.bincount(groups.index, weights=total, minlength=groups.count) - held
                for total, held in zip(self.totals, (held_s, held_f)))
        fitted = s + f > 0
        fit = newton_fit(design[fitted], s[fitted], f[fitted], start, _FOLD_TOLERANCE,
                         at_start=RowSums(information=information))
        held = np.flatnonzero(held_s + held_f > 0)
        return (_held_out(design[held] @ fit.coefficients, held_s[held], held_f[held]),
                fit.coefficients, fit.information)

    def _on_rows(self, columns, design, fold: int, start, information):
        # Rows held out of this fold stay in the design with no training weight, where they
        # add nothing to any sum: the design is made once, for fitting and scoring alike, and
        # the fit's own linear predictor scores the held rows.
        codes = self.coded.codes
        design[:, 0] = 1.0
        for i, j in enumerate(columns):
            # Indexing, not np.take: take converts small integer codes far more slowly.
            design[:, 1 + i] = self.woe(fold, j)[codes[:, j]]
        fit = newton_fit(design, self._train(0, fold), self._train(1, fold), start,
                         _FOLD_TOLERANCE, at_start=RowSums(information=information))
        held_s, held_f = self.held[0][fold], self.held[1][fold]
        rows = np.flatnonzero(held_s + held_f > 0)
        return (_held_out(fit.eta[rows], held_s[rows], held_f[rows]), fit.coefficients,
                fit.information)

    def fold_gains(self, columns, candidate: int, start=None, start_with=None) -> np.ndarray:
        """Held-out log-likelihood of the model with ``candidate`` minus without it, in each
        fold (nats).

        ``start``: the coefficients of the model without it, fitted on all the rows;
        ``start_with``: those of the model with it (by default ``start`` and a 0).
        """
        columns = tuple(columns)
        if start_with is None and start is not None:
            start_with = np.append(start, 0.0)
        return self.fold_log_likelihoods((*columns, candidate), start_with) \
            - self.fold_log_likelihoods(columns, start)

    def gain(self, columns, candidate: int, start=None, start_with=None) -> float:
        """Held-out log-likelihood of the model with ``candidate`` minus without it (nats),
        summed over the folds; see :meth:`fold_gains`."""
        return float(self.fold_gains(columns, candidate, start, start_with).sum())


def _held_out(eta, held_s, held_f) -> float:
    # s log p + f log(1 - p) = s eta - (s + f) log(1 + e^eta).
    return float(held_s @ eta - (held_s + held_f) @ np.logaddexp(0.0, eta))
