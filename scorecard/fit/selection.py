"""Choice of the characteristics that enter the scorecard.

Candidates are weight-of-evidence coded columns, one row per distinct pattern of bins with its
weighted counts of goods (successes) and bads (failures). Five stages run in order, each
recording why a candidate leaves:

1. information value floor;
2. correlation pruning, strongest IV first;
3. forward stepwise entry (or every survivor, with ``method='all'``): by score test, or with
   ``entry='gain'`` when a candidate raises the log-likelihood of held-out folds of the
   development counts, its weights of evidence estimated without them
   (:mod:`scorecard.fit.folds`); the score test, which does not know that the weights of
   evidence were fitted to the same rows, lets in most unrelated characteristics of many bins;
4. coefficient sign: with WoE coding every coefficient should be positive;
5. collinearity, by variance inflation factor.

Stages 4 and 5 repeat until neither removes anything, because dropping a collinear column can
turn another coefficient negative, while dropping a column never raises another's VIF. Ties are
broken by name: the name that sorts first is preferred, both to enter and to stay.
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping
from typing import NamedTuple

import numpy as np
from scipy import special

from scorecard import constraints as c
from scorecard.errors import InputError
from scorecard.fit.design import CodedColumns, Groups, code_columns
from scorecard.fit.folds import FoldLikelihood
from scorecard.fit.logistic import (
    SELECTION_TOLERANCE,
    LogisticFit,
    NewtonResult,
    RowSums,
    as_design,
    as_weights,
    fit_prepared,
    newton_fit,
    score_statistics_from_sums,
    sums_at,
)


class Fate(NamedTuple):
    """What became of one candidate characteristic.

    Attributes
    ----------
    selected : bool
    stage : str
        Where it was decided: ``'information value'``, ``'correlation'``, ``'stepwise'``,
        ``'coefficient sign'``, ``'collinearity'``, ``'kept by config'`` or ``'selected'``.
    reason : str
        One plain sentence.
    """

    selected: bool
    stage: str
    reason: str


class Selection(NamedTuple):
    """Outcome of :func:`select_characteristics`.

    Attributes
    ----------
    selected : tuple of str
        Chosen characteristics, kept ones first, then in order of entry.
    fates : dict of str to Fate
        One entry for every candidate.
    fit : LogisticFit
        Final fit on the selected columns.
    correlation : ndarray
        Weighted correlation matrix of all candidates, in the order of ``names``.
    vif : dict of str to float
        Variance inflation factor of each selected column in the final model.
    steps : tuple of dict
        Stepwise log, one ``{'step', 'entered', 'p_value', 'log_likelihood',
        'held_out_gain'}`` per entry, in order (the gain is None where the p-value sufficed);
        it keeps entries that a later stage removed.
    """

    selected: tuple[str, ...]
    fates: dict[str, Fate]
    fit: LogisticFit
    correlation: np.ndarray
    vif: dict[str, float]
    steps: tuple[dict, ...]


def weighted_correlation(X, weights, *, names=None) -> np.ndarray:
    """Pearson correlation matrix of the columns of ``X`` under row weights.

    Parameters
    ----------
    X : array_like of shape (n, k), or CodedColumns
    weights : array_like of shape (n,)
        Non-negative row weights, e.g. the number of accounts with each pattern.
    names : sequence of str, optional
        Column names, used in warnings only.

    Returns
    -------
    ndarray of shape (k, k)
        Equal to ``np.corrcoef`` of the rows repeated by integer weights. Rows and columns of a
        column that is constant under the weights are nan.

    Warns
    -----
    UserWarning
        When a column is constant under the weights.

    Examples
    --------
    >>> X = np.array([[0.0, 1.0], [1.0, 3.0], [2.0, 2.0]])
    >>> np.round(weighted_correlation(X, [1, 2, 1]), 4)
    array([[1.    , 0.4264],
           [0.4264, 1.    ]])
    """
    coded = _coded(X)
    k = coded.n_columns
    w = _weights(weights, "weights", coded.n_rows)
    w = w / w.sum()
    # Means and ranges come exactly from the weight of each code; the float design is only
    # ever made a block of rows at a time.
    per_code = coded.column_sums(w)
    mean = np.array([values @ share for values, share in zip(coded.values, per_code)])
    scale = np.array([np.abs(values[share > 0]).max(initial=0.0)
                      for values, share in zip(coded.values, per_code)])
    covariance = np.zeros((k, k))
    root = np.sqrt(w)
    for start, stop, block in coded.blocks(range(k)):
        # Centred and scaled by the roots of the weights in place (the block is a reused
        # buffer), then multiplied by its own transpose: a symmetric rank-k update in BLAS.
        block -= mean
        block *= root[start:stop, None]
        covariance += block.T @ block
    spread = np.sqrt(np.diag(covariance))
    constant = spread <= 1e-12 * np.maximum(scale, np.finfo(float).tiny)
    if constant.any():
        labels = _labels(names, k)
        warnings.warn(
            "constant under the weights, so its correlations are undefined (nan): "
            + ", ".join(labels[j] for j in np.flatnonzero(constant)),
            stacklevel=2,
        )
    safe = np.where(constant, 1.0, spread)
    correlation = np.clip(covariance / np.outer(safe, safe), -1.0, 1.0)
    np.fill_diagonal(correlation, 1.0)
    correlation[constant, :] = np.nan
    correlation[:, constant] = np.nan
    return correlation


def variance_inflation(X, weights, *, names=None) -> np.ndarray:
    """Variance inflation factor of each column under row weights.

    ``VIF_j = 1 / (1 - R_j**2)``, ``R_j**2`` being the weighted R-squared of column ``j`` on the
    others with an intercept; equal to the diagonal of the inverse of the weighted correlation
    matrix when that is invertible.

    Parameters
    ----------
    X : array_like of shape (n, k)
    weights : array_like of shape (n,)
        Non-negative row weights.
    names : sequence of str, optional
        Column names, used in warnings only.

    Returns
    -------
    ndarray of shape (k,)
        ``inf`` for a column that is constant, or an exact linear combination of others.

    Examples
    --------
    >>> X = np.array([[0.0, 1.0], [1.0, 3.0], [2.0, 2.0]])
    >>> np.round(variance_inflation(X, [1, 2, 1]), 4)
    array([1.2222, 1.2222])
    """
    return _vif(weighted_correlation(X, weights, names=names))


def select_characteristics(
    X,
    successes,
    failures,
    names,
    information_values,
    *,
    min_iv=c.MIN_IV.default,
    max_correlation=c.MAX_CORRELATION.default,
    max_vif=c.MAX_VIF.default,
    method=c.METHOD.default,
    entry=c.ENTRY.default,
    entry_p_value=c.ENTRY_P_VALUE.default,
    max_characteristics=c.MAX_CHARACTERISTICS.default,
    keep=(),
    prior_rows=c.PRIOR_ROWS.default,
    gain_folds=c.GAIN_FOLDS.default,
    seed=c.SEED.default,
) -> Selection:
    """Choose the characteristics of the scorecard and fit the final model.

    Parameters
    ----------
    X : array_like of shape (n, k), or CodedColumns
        WoE-coded value of each candidate for each pattern; as codes with a value table per
        column (the bins and their weights of evidence), nothing of size n by k is made.
    successes, failures : array_like of shape (n,)
        Weighted counts of goods and bads per pattern.
    names : sequence of str
        Names of the ``k`` candidates.
    information_values : sequence of float or mapping of str to float
        IV of each candidate, aligned with ``names`` or keyed by name.
    min_iv : float
        Candidates with a lower IV are dropped (stage 1).
    max_correlation : float
        A candidate whose absolute correlation with an already retained one exceeds this is
        dropped (stage 2).
    max_vif : float
        Ceiling of the variance inflation factor (stage 5); above 1, since a VIF is at least 1.
    method : {'stepwise', 'all'}
        Forward selection, or every survivor of stage 2 (stage 3).
    entry : {'gain', 'score'}
        What lets a candidate enter in forward selection. ``'gain'``: candidates are asked in
        order of their score statistic, and the first that raises the model's log-likelihood
        on held-out folds of the patterns, its weights of evidence estimated without them
        (:mod:`scorecard.fit.folds`), enters. ``'score'``: the candidate with the largest score
        statistic enters when its p-value is below ``entry_p_value``.
    entry_p_value : float
        The score test's entry level (``entry='score'``).
    max_characteristics : int
        At most this many characteristics, kept ones included.
    keep : sequence of str
        Characteristics forced into the model; no stage removes them.
    prior_rows : float
        The prior the weights of evidence were shrunk with, used again when they are
        estimated afresh on folds (``entry='gain'``). When ``X`` is a plain array rather than
        bin codes, its values are used as they are.
    gain_folds : int
        Number of folds (``entry='gain'``).
    seed : int
        Seed of the folds.

    Returns
    -------
    Selection

    Warns
    -----
    UserWarning
        When a kept characteristic ends with a coefficient that is not positive, or when
        nothing is selected.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(500, 2))
    >>> trials = np.full(500, 10.0)
    >>> goods = rng.binomial(10, 1 / (1 + np.exp(-(1.0 + X[:, 0])))).astype(float)
    >>> result = select_characteristics(X, goods, trials - goods, ["a", "b"], [0.5, 0.001])
    >>> result.selected, result.fates["b"].stage
    (('a',), 'stepwise')
    >>> floored = select_characteristics(X, goods, trials - goods, ["a", "b"], [0.5, 0.001],
    ...                                  min_iv=0.02)
    >>> floored.fates["b"].stage
    'information value'
    """
    coded = _coded(X)
    n, k = coded.n_rows, coded.n_columns
    _check_settings(min_iv, max_correlation, max_vif, method, entry_p_value, max_characteristics)
    if not c.ENTRY.allows(entry):
        raise InputError(f"entry: expected one of {', '.join(map(repr, c.ENTRIES))}, "
                         f"got {entry!r}")
    if not c.GAIN_FOLDS.allows(gain_folds):
        raise InputError(f"gain_folds: expected {c.GAIN_FOLDS.expected()}, got {gain_folds!r}")
    names = _names(names, k)
    successes = _weights(successes, "successes", n)
    failures = _weights(failures, "failures", n)
    keep = _keep(keep, names, max_characteristics)
    weights = successes + failures
    correlation = weighted_correlation(coded, weights, names=names)
    used = weights > 0
    data = _Candidates(
        coded=coded if used.all() else coded.rows(used),
        successes=successes[used],
        failures=failures[used],
        names=names,
        iv=_information_values(information_values, names),
        kept=tuple(names.index(name) for name in keep),
        correlation=correlation,
    )
    _require_estimable(data)

    fates = {name: Fate(True, "kept by config", "named in keep") for name in keep}
    floor_passed = _iv_floor(data, np.isnan(np.diag(correlation)), min_iv, fates)
    survivors = _prune_correlated(data, floor_passed, correlation, max_correlation, fates)
    if method == "stepwise":
        # Bin codes with their WoE tables are re-estimated on each fold; a plain array's
        # values are all there is.
        folds = FoldLikelihood(data.coded, data.successes, data.failures, prior_rows, seed,
                               gain_folds, refit_woe=isinstance(X, CodedColumns)) \
            if entry == "gain" else None
        selected, steps = _forward(data, survivors, entry_p_value, max_characteristics, fates,
                                   folds)
    else:
        selected, steps = _take_all(data, survivors, max_characteristics, fates), ()
    # Exact collinearity first: no coefficient of such a column can be estimated at all.
    selected = _drop_collinear(data, selected, np.finfo(float).max, fates)
    while True:
        selected = _drop_wrong_signs(data, selected, fates)
        before = len(selected)
        selected = _drop_collinear(data, selected, max_vif, fates)
        if len(selected) == before:
            break

    chosen = tuple(names[j] for j in selected)
    # The final fit runs on one row per distinct pattern of the chosen columns: the same
    # likelihood as on every row, on far fewer rows (or on the rows, where patterns are not
    # fewer). It starts from the selection's own fit of these columns and its information
    # matrix: the same optimum, reached in a step or two.
    start, information = data.fitted.get(tuple(selected), (None, None))
    fit = fit_prepared(*data.design(selected), chosen, start, hessian=information)
    _warn_about_outcome(fit, chosen, keep)
    vif = data.vif(selected)
    for j in selected:
        passed = Fate(True, "selected", f"IV {data.iv[j]:.3f}; passed every stage")
        fates.setdefault(names[j], passed)
    return Selection(
        selected=chosen,
        fates={name: fates[name] for name in names},
        fit=fit,
        correlation=correlation,
        vif={name: float(value) for name, value in zip(chosen, vif)},
        steps=steps,
    )


class _Grouped(NamedTuple):
    """One design row (intercept first) per group, with the group's goods and bads."""

    design: np.ndarray
    successes: np.ndarray
    failures: np.ndarray


# Grouping rows by their codes pays while the groups are far fewer than the rows. Past this
# share, factorizing the codes and gathering one design row per group cost more than they save,
# and the fits run on the rows (the patterns of all candidates) themselves.
_UNGROUPED_SHARE = 0.5


class _RowDesign:
    """The values of some candidates on the rows, intercept first, in one column-major matrix.

    Its columns are swapped in place so that the columns of the model at hand lead, in order:
    the model's design is then a view of the leading columns, with no copy, and the candidates
    that a score test weighs against it are the columns after them.
    """

    def __init__(self, coded: CodedColumns, columns):
        self.order = [-1, *columns]          # -1 is the intercept
        self.matrix = np.empty((coded.n_rows, len(self.order)), order="F")
        self.matrix[:, 0] = 1.0
        for i, j in enumerate(columns, start=1):
            np.take(coded.values[j], coded.codes[:, j], out=self.matrix[:, i])

    def holds(self, columns) -> bool:
        return set(columns) <= set(self.order)

    def leading(self, columns) -> np.ndarray:
        """The intercept and ``columns``, in this order, as a view of the leading columns."""
        matrix = self.matrix
        for i, j in enumerate(columns, start=1):
            at = self.order.index(j)
            if at != i:
                held = matrix[:, i].copy()
                matrix[:, i] = matrix[:, at]
                matrix[:, at] = held
                self.order[i], self.order[at] = j, self.order[i]
        return matrix[:, : 1 + len(columns)]


class _Candidates:
    """The rows of positive weight, and what selection learns of the candidates as it goes."""

    def __init__(self, coded: CodedColumns, successes, failures, names, iv, kept, correlation):
        self.coded = coded
        self.successes, self.failures = successes, failures
        self.names, self.iv, self.kept, self.correlation = names, iv, kept, correlation
        self.spread = []          # column sets whose groups are hardly fewer than the rows
        self.fitted = {}          # columns (in order) -> coefficients and information matrix
        self._rows = None         # _RowDesign, made when first needed

    def grouped(self, groups: Groups) -> _Grouped:
        # Filled in place: one design-sized array, however many columns are chosen.
        design = np.empty((groups.count, 1 + len(groups.columns)))
        design[:, 0] = 1.0
        self.coded.group_values(groups, out=design[:, 1:])
        successes, failures = (np.bincount(groups.index, weights=w, minlength=groups.count)
                               for w in (self.successes, self.failures))
        return _Grouped(design, successes, failures)

    def hold_rows(self, columns) -> None:
        """Make the one row design, of ``columns``: every column that a later model or score
        test can name, so that it is made once."""
        if self._rows is None or not self._rows.holds(columns):
            self._rows = _RowDesign(self.coded, columns)

    def rows(self, columns) -> _Grouped:
        """The design of ``columns`` on the rows, intercept first: leading columns of the row
        design, which holds them."""
        self.hold_rows(columns)
        return _Grouped(self._rows.leading(columns), self.successes, self.failures)

    def is_spread(self, columns) -> bool:
        """Whether rows grouped by ``columns`` are known to be hardly fewer than the rows: as
        they are for any set of columns holding one known to be so."""
        return any(known <= set(columns) for known in self.spread)

    def design(self, columns) -> _Grouped:
        """The design of ``columns`` on grouped rows, or on the rows where groups hardly
        compress them."""
        columns = tuple(columns)
        if not self.is_spread(columns):
            groups = self.coded.group(columns)
            if groups.count <= _UNGROUPED_SHARE * self.coded.n_rows:
                return self.grouped(groups)
            self.spread.append(frozenset(columns))
        return self.rows(columns)

    def fast_fit(self, columns):
        """Coefficients, information matrix and log-likelihood of the model on ``columns``.

        A model fitted before starts from its optimum and its information matrix: a single
        step that makes no pass over the design for the matrix confirms it.
        """
        columns = tuple(columns)
        start, information = self.fitted.get(columns, (None, None))
        fit = newton_fit(*self.design(columns), start, SELECTION_TOLERANCE,
                         at_start=RowSums(information=information))
        self.fitted[columns] = (fit.coefficients, fit.information)
        return fit.coefficients, fit.information, fit.log_likelihood

    def wide(self, model: _Model) -> np.ndarray | None:
        """The row design, the model's columns leading, where the model is fitted on it: its
        fit's last pass then sums over the candidates too."""
        return None if model.groups is not None else self._rows.matrix

    def score(self, model: _Model, fit: NewtonResult, columns):
        """Score-test statistics and p-values of ``columns``, each against the fitted model,
        and the information matrix of the model and the candidates at its optimum.

        The sums the tests need are those of the row design, the model's columns leading and
        the candidates after them, at the model's optimum: the last pass of a fit on the rows
        made them (``fit.wide``); a fit on groups needs one more pass, at its fitted values.
        Returns the statistics, the p-values and the sums (:class:`_Sums`).
        """
        self.hold_rows(model.columns + list(columns))
        self._rows.leading(model.columns)
        if fit.wide is not None:
            totals, gram = fit.wide.gradient, fit.wide.information
        else:
            eta = fit.eta if model.groups is None else fit.eta[model.groups.index]
            totals, gram = sums_at(self._rows.matrix, self.successes, self.failures, eta)
        k, at = 1 + len(model.columns), [self._rows.order.index(j) for j in columns]
        sums = _Sums(gram[:k, :k], gram[:k, at], gram[at, at], totals[:k], totals[at])
        return (*score_statistics_from_sums(sums.scores, sums.own, sums.cross, sums.information),
                sums)

    def vif(self, columns) -> np.ndarray:
        """VIF from the correlation matrix computed once: no pass over the patterns."""
        if not len(columns):
            return np.empty(0)
        return _vif(self.correlation[np.ix_(columns, columns)])


def floor_fates(names, information_values, min_iv, keep=()) -> dict[str, Fate]:
    """The fate of each candidate that the information value floor removes (stage 1).

    A build calls this before it counts patterns, so that only the characteristics that can
    still enter the model take part in the pattern table; :func:`select_characteristics` then
    finds the same fates again.

    Examples
    --------
    >>> floor_fates(["a", "b", "c"], [0.3, 0.01, 0.0], 0.02, keep=["c"])
    {'b': Fate(selected=False, stage='information value', reason='IV 0.010 below the floor 0.02')}
    """
    return {name: Fate(False, "information value", f"IV {iv:.3f} below the floor {min_iv:g}")
            for name, iv in zip(names, information_values) if iv < min_iv and name not in keep}


def _iv_floor(data: _Candidates, constant, min_iv, fates) -> list[int]:
    kept = [data.names[j] for j in data.kept]
    below = floor_fates(data.names, data.iv, min_iv, kept)
    passed = []
    for j in sorted(range(len(data.names)), key=lambda j: (-data.iv[j], data.names[j])):
        name = data.names[j]
        if j in data.kept:
            continue
        if constant[j]:
            fates[name] = Fate(
                False, "information value", "constant on every pattern, so it carries no signal"
            )
        elif name in below:
            fates[name] = below[name]
        else:
            passed.append(j)
    return passed


def _prune_correlated(data: _Candidates, candidates, correlation, max_correlation, fates):
    """Walk candidates by falling IV; kept ones count as retained from the start."""
    retained = list(data.kept)
    for j in candidates:
        r = correlation[j, retained]
        too_close = np.abs(r) > max_correlation
        if not too_close.any():
            retained.append(j)
            continue
        # The strongest offending correlation is named; argmax keeps the first of equals.
        other = retained[int(np.argmax(np.where(too_close, np.abs(r), -1.0)))]
        if other in data.kept:
            why = "which is kept by config"
        elif data.iv[other] > data.iv[j]:
            why = "which has the higher IV"
        else:
            why = "which has the same IV and comes first by name"
        fates[data.names[j]] = Fate(
            False,
            "correlation",
            f"correlation {correlation[j, other]:.2f} with {data.names[other]}, {why}",
        )
    return retained[len(data.kept) :]


class _Sums(NamedTuple):
    """Sums over rows at a fitted model, weights ``w = n p (1 - p)`` and residuals
    ``r = s - n p``: ``information`` is ``X1' W X1``, ``cross`` is ``X1' W Z`` and ``own`` the
    diagonal of ``Z' W Z`` for the candidate columns ``Z``; ``gradient`` is ``X1' r`` and
    ``scores`` is ``Z' r``."""

    information: np.ndarray
    cross: np.ndarray
    own: np.ndarray
    gradient: np.ndarray
    scores: np.ndarray

    def one_step(self, i: int, fit: NewtonResult) -> np.ndarray:
        """The coefficients of the model with candidate ``i`` after one Newton step from the
        model's optimum (the candidate's at zero): close to that model's own optimum, where
        its fits on folds of the rows start, with no pass over the rows."""
        sums = self.with_column(i, fit, False)
        start = np.append(fit.coefficients, 0.0)
        try:
            return start + np.linalg.solve(sums.information, sums.gradient)
        except np.linalg.LinAlgError:
            return start

    def with_column(self, i: int, fit: NewtonResult, on_rows: bool) -> RowSums:
        """The sums of the model with candidate ``i`` added, at the same coefficients (the
        candidate's at zero), where the next Newton fit starts: its information matrix,
        gradient and log-likelihood, and its linear predictor where the model is fitted on
        the rows (on groups, the groups change)."""
        k = self.information.shape[0]
        out = np.empty((k + 1, k + 1))
        out[:k, :k] = self.information
        out[:k, k] = out[k, :k] = self.cross[:, i]
        out[k, k] = self.own[i]
        return RowSums(fit.eta if on_rows else None, np.append(self.gradient, self.scores[i]),
                       out, fit.log_likelihood)


class _Model:
    """The design of the model that forward selection grows one column at a time.

    Rows are grouped by their codes on the model's columns while that compresses them; once
    the groups pass ``_UNGROUPED_SHARE`` of the rows, the design is the leading columns of the
    row design, and each entering column joins them, with no grouping at all.
    """

    def __init__(self, data: _Candidates, columns):
        self.data, self.columns = data, list(columns)
        self.groups = data.coded.group(self.columns)
        self._settle()

    def add(self, column: int) -> None:
        self.columns.append(column)
        if self.groups is None:
            self.grouped = self.data.rows(self.columns)
            return
        # Groups past the share are never numbered: they are only counted.
        self.groups = self.data.coded.refine(self.groups, column,
                                             int(_UNGROUPED_SHARE * self.data.coded.n_rows))
        self._settle()

    def _settle(self) -> None:
        data = self.data
        if self.groups is not None and self.groups.count <= _UNGROUPED_SHARE * data.coded.n_rows:
            self.grouped = data.grouped(self.groups)
            return
        data.spread.append(frozenset(self.columns))
        self.groups = None
        self.grouped = data.rows(self.columns)


def _forward(data: _Candidates, candidates, entry_p_value, cap, fates, folds=None):
    names = data.names
    chosen = list(data.kept)
    remaining = sorted(candidates, key=lambda j: names[j])
    # Every score test needs the candidates on the rows: made once, with the model's columns.
    data.hold_rows(chosen + remaining)
    model = _Model(data, chosen)
    fit = newton_fit(*model.grouped, None, SELECTION_TOLERANCE, wide=data.wide(model))
    data.fitted[tuple(chosen)] = (fit.coefficients, fit.information)
    last_p: dict[int, float] = {}
    last_gain: dict[int, float] = {}
    steps = []
    while remaining and len(chosen) < cap:
        statistics, p_values, sums = data.score(model, fit, remaining)
        last_p = dict(zip(remaining, p_values))
        # The largest statistic is the smallest p-value, without the p-values' underflow to 0;
        # `remaining` is sorted by name, so argmax breaks ties by name.
        best = int(np.argmax(statistics))
        gain = None
        if folds is None:
            if not p_values[best] < entry_p_value:
                break
        else:
            # The held-out folds ask whether the characteristic, weights of evidence and all,
            # predicts rows it never saw. Candidates are asked in order of their score
            # statistic (ties by name); one with no score at all lies in the span of the model.
            last_gain.clear()
            for i in sorted(np.flatnonzero(statistics > 0), key=lambda i: -statistics[i]):
                last_gain[remaining[i]] = folds.gain(chosen, remaining[i], fit.coefficients,
                                                     sums.one_step(i, fit))
                if last_gain[remaining[i]] > 0:
                    best, gain = int(i), last_gain[remaining[i]]
                    break
            if gain is None:
                break
        entering = remaining.pop(best)
        chosen.append(entering)
        # On the rows, the linear predictor at the start is the last model's.
        at_start = sums.with_column(best, fit, model.groups is None)
        model.add(entering)
        fit = newton_fit(*model.grouped, np.append(fit.coefficients, 0.0), SELECTION_TOLERANCE,
                         at_start=at_start, wide=data.wide(model))
        data.fitted[tuple(chosen)] = (fit.coefficients, fit.information)
        steps.append(
            {
                "step": len(steps) + 1,
                "entered": names[entering],
                "p_value": float(p_values[best]),
                "log_likelihood": fit.log_likelihood,
                "held_out_gain": gain,
            }
        )
        how = f"score-test p-value {_p_text(p_values[best])}"
        if gain is not None:
            how = (f"a held-out log-likelihood gain of {gain:.3g} on {folds.folds} folds "
                   f"({how})")
        fates[names[entering]] = Fate(True, "selected", f"entered at step {len(steps)} with {how}")
    for j in remaining:
        if len(chosen) >= cap:
            reason = f"not entered: max_characteristics {cap} was reached first"
        elif folds is None:
            reason = (
                f"score-test p-value {_p_text(last_p[j])} at the last step, not below the entry "
                f"level {entry_p_value:g}"
            )
        elif j in last_gain:
            reason = (f"no held-out log-likelihood gain at the last step ({last_gain[j]:.3g} on "
                      f"{folds.folds} folds; score-test p-value {_p_text(last_p[j])})")
        else:
            reason = "nothing to add at the last step: the model already spans it (score 0)"
        fates[names[j]] = Fate(False, "stepwise", reason)
    return chosen, tuple(steps)


def _take_all(data: _Candidates, survivors, cap, fates) -> list[int]:
    room = cap - len(data.kept)
    for j in survivors[room:]:
        fates[data.names[j]] = Fate(
            False,
            "stepwise",
            f"IV {data.iv[j]:.3f} ranks beyond max_characteristics {cap} (method 'all')",
        )
    return list(data.kept) + survivors[:room]


def _drop_wrong_signs(data: _Candidates, selected, fates) -> list[int]:
    selected = list(selected)
    while selected:
        coefficients, information, _ = data.fast_fit(selected)
        slopes = coefficients[1:]
        wrong = [i for i, j in enumerate(selected) if j not in data.kept and slopes[i] <= 0]
        if not wrong:
            break
        # A separating model's information matrix is singular; its z-values are then infinite.
        with np.errstate(divide="ignore", invalid="ignore"):
            z = slopes / np.sqrt(np.diag(np.linalg.pinv(information)))[1:]
        worst = max(wrong, key=lambda i: (-z[i], data.names[selected[i]]))
        fates[data.names[selected[worst]]] = Fate(
            False,
            "coefficient sign",
            f"coefficient {slopes[worst]:.3g} (z {z[worst]:.2f}) is not positive, as "
            "weight-of-evidence coding requires",
        )
        del selected[worst]
    return selected


def _drop_collinear(data: _Candidates, selected, max_vif, fates) -> list[int]:
    selected = list(selected)
    while selected:
        vif = data.vif(selected)
        high = [i for i, j in enumerate(selected) if j not in data.kept and vif[i] > max_vif]
        if not high:
            break
        worst = max(high, key=lambda i: (vif[i], data.names[selected[i]]))
        if np.isinf(vif[worst]):
            reason = "an exact linear combination of the other selected characteristics"
        else:
            reason = f"VIF {vif[worst]:.2f} above the ceiling {max_vif:g}"
        fates[data.names[selected[worst]]] = Fate(False, "collinearity", reason)
        del selected[worst]
    return selected


def _require_estimable(data: _Candidates) -> None:
    if not data.kept:
        return
    vif = data.vif(list(data.kept))
    if np.isinf(vif).any():
        raise InputError(
            f"keep: {data.names[data.kept[int(np.argmax(vif))]]!r} is constant or an exact "
            "linear combination of the other kept characteristics, so its coefficient cannot "
            "be estimated"
        )


def _warn_about_outcome(fit: LogisticFit, chosen, keep) -> None:
    if not chosen:
        warnings.warn(
            "no characteristic was selected; the model is the intercept alone", stacklevel=3
        )
    for name, coefficient in zip(fit.names[1:], fit.coefficients[1:]):
        if name in keep and coefficient <= 0:
            warnings.warn(
                f"kept characteristic {name!r} has coefficient {coefficient:.3g} in the final "
                "model; with weight-of-evidence coding it should be positive",
                stacklevel=3,
            )


def _p_text(p: float) -> str:
    # Below about 1e-16 a p-value says nothing more than "certain"; tiny ones often underflow.
    return "< 1e-16" if p < 1e-16 else f"{p:.3g}"


def _vif(correlation: np.ndarray) -> np.ndarray:
    """VIF of each column from a correlation matrix whose constant columns are nan."""
    usable = ~np.isnan(np.diag(correlation))
    vif = np.full(correlation.shape[0], np.inf)
    vif[usable] = _inverse_diagonal(correlation[np.ix_(usable, usable)])
    return vif


def _coded(X) -> CodedColumns:
    return X if isinstance(X, CodedColumns) else code_columns(as_design(X, "X"))


def _inverse_diagonal(correlation: np.ndarray) -> np.ndarray:
    """Diagonal of the inverse of a correlation matrix, inf where a column is in the span of
    the others (the inverse itself would not exist)."""
    k = correlation.shape[0]
    if k == 1:
        return np.ones(1)
    diagonal = np.empty(k)
    for j in range(k):
        others = np.arange(k) != j
        link = correlation[others, j]
        fitted, *_ = np.linalg.lstsq(correlation[np.ix_(others, others)], link, rcond=None)
        unexplained = 1.0 - link @ fitted
        diagonal[j] = 1.0 / unexplained if unexplained > 1e-12 else np.inf
    return diagonal


def _weights(values, label: str, n: int) -> np.ndarray:
    values = as_weights(values, label, n)
    if values.sum() <= 0:
        raise InputError(f"{label}: all zero")
    return values


def _labels(names, k: int) -> list[str]:
    return [f"column {j}" for j in range(k)] if names is None else [str(n) for n in names]


def _names(names, k: int) -> list[str]:
    names = list(names)
    if len(names) != k:
        raise InputError(f"names: expected {k} names to match the columns of X, got {len(names)}")
    if not all(isinstance(name, str) and name for name in names):
        raise InputError("names: every name must be a non-empty string")
    seen = set()
    for name in names:
        if name in seen or name == "intercept":
            raise InputError(f"names: {name!r} is not a usable unique name")
        seen.add(name)
    return names


def _information_values(values, names) -> np.ndarray:
    if isinstance(values, Mapping):
        missing = [name for name in names if name not in values]
        if missing:
            raise InputError(f"information_values: no value for {missing[0]!r}")
        values = [values[name] for name in names]
    values = np.asarray(values, dtype=float)
    if values.shape != (len(names),):
        raise InputError(
            f"information_values: expected {len(names)} values, one per name, "
            f"got shape {values.shape}"
        )
    bad = ~np.isfinite(values) | (values < 0)
    if bad.any():
        j = int(np.flatnonzero(bad)[0])
        raise InputError(
            f"information_values: {names[j]!r} has {values[j]}, expected a finite value >= 0"
        )
    return values


def _keep(keep, names, max_characteristics) -> tuple[str, ...]:
    if isinstance(keep, str):
        keep = (keep,)
    keep = tuple(dict.fromkeys(keep))
    unknown = [name for name in keep if name not in names]
    if unknown:
        raise InputError(f"keep: {unknown[0]!r} is not one of the candidate names")
    if len(keep) > max_characteristics:
        raise InputError(
            f"keep: names {len(keep)} characteristics, more than max_characteristics "
            f"{max_characteristics}"
        )
    return keep


def _check_settings(min_iv, max_correlation, max_vif, method, entry_p_value, cap) -> None:
    # The limits are those the config reader applies (scorecard.constraints).
    checks = [
        ("min_iv", min_iv, c.MIN_IV),
        ("max_correlation", max_correlation, c.MAX_CORRELATION),
        ("max_vif", max_vif, c.MAX_VIF),
        ("entry_p_value", entry_p_value, c.ENTRY_P_VALUE),
        ("max_characteristics", cap, c.MAX_CHARACTERISTICS),
    ]
    for label, value, setting in checks:
        if not setting.allows(value):
            raise InputError(f"{label}: expected {setting.expected()}, got {value!r}")
    if not c.METHOD.allows(method):
        raise InputError(f"method: expected one of {', '.join(map(repr, c.METHODS))}, "
                         f"got {method!r}")
