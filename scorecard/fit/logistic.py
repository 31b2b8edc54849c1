"""Logistic regression on grouped counts.

The fit works on counts per distinct pattern of coded values rather than on rows: each design row
carries its weighted count of successes and failures. For weight-of-evidence coded data this is
exact, since every applicant with the same pattern of bins has the same design row. The model
predicts the log-odds of a success (in a scorecard, of GOOD).

:func:`fit_logistic` is the reported fit, with standard errors and p-values from the inverse of
the information matrix at the optimum; :func:`fit_logistic_fast` and :func:`score_test` are the
lighter primitives that forward selection calls many times. All of them run Newton's method in
numpy, whose memory stays at a few copies of the design; the tests hold the fit to statsmodels'
GLM and to published tables.
"""

from __future__ import annotations

import warnings
from typing import NamedTuple

import numpy as np

# scipy.special, not scipy.stats: the same functions that scipy.stats' normal and chi-square
# distributions call, without the second of imports that scipy.stats costs every command.
from scipy import special

from scorecard.errors import InputError

# Newton's method converges quadratically, so a relative step of 1e-12 costs at most one or two
# iterations more than a loose tolerance and makes two fits of the same data agree to ~1e-10.
_STEP_TOLERANCE = 1e-12
# Forward selection only ranks candidates by score tests. A step of 1e-7 follows one of about
# 1e-4 in Newton's quadratic range, so it leaves the iterate within about 1e-11 of the optimum,
# which no score test notices, and it saves the pass that a step of 1e-14 would cost; the
# reported fit runs to the full precision above.
SELECTION_TOLERANCE = 1e-7
# Steps larger than this are checked against the log-likelihood and halved if they overshoot;
# within it Newton's method is in its quadratic range and every full step is an improvement.
_CHECKED_STEP = 1e-2
_MAX_ITERATIONS = 100
_SEPARATED_LOG_ODDS = 30.0

# Ridge strength of the fallback fit, per unit of total weight, on standardised columns. Under
# separation it stops the coefficients once fitted odds reach about 1e4 to 1; elsewhere it moves
# the estimates by about this fraction of a standard error.
_FALLBACK_RIDGE = 1e-4


class LogisticFit(NamedTuple):
    """Coefficient table of a fitted logistic regression.

    Attributes
    ----------
    names : tuple of str
        ``'intercept'`` first, then the column names.
    coefficients, standard_errors, z_values, p_values : ndarray
        One entry per name; p-values are two-sided, from the normal distribution.
    log_likelihood : float
        ``sum(successes * log p + failures * log(1 - p))`` in nats. It leaves out the binomial
        coefficients, so rows and grouped counts of the same data give the same value.
    converged : bool
        Whether the maximum-likelihood fit converged. False when the ridge-penalised fallback
        was used instead (a warning says so).
    iterations : int
        Iterations of the fit that produced the estimates.
    """

    names: tuple[str, ...]
    coefficients: np.ndarray
    standard_errors: np.ndarray
    z_values: np.ndarray
    p_values: np.ndarray
    log_likelihood: float
    converged: bool
    iterations: int


class _Optimum(NamedTuple):
    coefficients: np.ndarray
    hessian: np.ndarray
    converged: bool
    iterations: int
    last: RowSums                # the pass at the coefficients (over the wider design if any)


class RowSums(NamedTuple):
    """Sums over the rows at some coefficients; a field is None where it was not made.

    Attributes
    ----------
    eta : ndarray of shape (n,)
        Linear predictor of each row.
    gradient : ndarray of shape (k,)
        ``X' (s - n p)``: the score of each column.
    information : ndarray of shape (k, k)
        ``X' diag(n p (1 - p)) X``.
    log_likelihood : float
    """

    eta: np.ndarray | None = None
    gradient: np.ndarray | None = None
    information: np.ndarray | None = None
    log_likelihood: float | None = None


class NewtonResult(NamedTuple):
    """What :func:`newton_fit` returns: the coefficients (intercept first), the information
    matrix of the last full Newton step, the log-likelihood and the linear predictor of each
    row, all at the optimum; with a wider design, the sums over all of its columns there
    (:class:`RowSums`, the information matrix at the optimum itself), else None."""

    coefficients: np.ndarray
    information: np.ndarray
    log_likelihood: float
    eta: np.ndarray
    wide: RowSums | None = None


def fit_logistic(X, successes, failures, names=None, start=None) -> LogisticFit:
    """Fit a logistic regression with intercept to grouped success and failure counts.

    Parameters
    ----------
    X : array_like of shape (n, k)
        Design without the intercept column, which is added here. ``k`` may be 0.
    successes, failures : array_like of shape (n,)
        Non-negative (possibly fractional) weights of successes and failures on each row.
        Rows whose two weights are both zero carry no information and are ignored.
    names : sequence of str, optional
        Names of the ``k`` columns; ``x1``, ``x2``, ... by default.
    start : array_like of shape (k + 1,), optional
        Starting coefficients (intercept first), e.g. a fast fit's optimum, which saves
        iterations; the optimum does not depend on it.

    Returns
    -------
    LogisticFit

    Warns
    -----
    UserWarning
        When the maximum-likelihood fit does not converge or the data are separated; the
        returned numbers then come from a lightly ridge-penalised fit and stay finite.

    Raises
    ------
    InputError
        On wrong shapes, negative or non-finite values, no successes or no failures, or a
        column that is a linear combination of the intercept and earlier columns.

    Examples
    --------
    >>> fit = fit_logistic([[0.0], [1.0], [2.0]], [2, 5, 9], [8, 5, 1], names=["x"])
    >>> fit.names
    ('intercept', 'x')
    >>> bool(fit.coefficients[1] > 0)
    True
    """
    X1, s, f = _prepare(X, successes, failures)
    names = _column_names(names, X1.shape[1] - 1)
    return fit_prepared(X1, s, f, names, _start(start, X1.shape[1]), stacklevel=3)


def fit_prepared(X1, s, f, names, start=None, *, hessian=None, stacklevel=2) -> LogisticFit:
    """The unchecked core of :func:`fit_logistic`, for a design prepared once.

    ``X1`` holds the intercept column first and only rows of positive weight; ``names`` are
    the names of its other columns. ``hessian``, when given, is the information matrix at
    ``start`` (a caller that fitted these columns before holds it), so that the first Newton
    step makes no pass over the design for it; the optimum does not depend on it.
    """
    _require_full_rank(X1, names)
    optimum = _newton(X1, s, f, start, np.zeros(X1.shape[1]), at_start=RowSums(
        information=hessian))
    coefficients, eta = optimum.coefficients, optimum.last.eta
    # The information matrix at the optimum itself, not the one Newton's last step reused.
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        information = information_at(X1, s + f, eta)
        try:
            standard_errors = np.sqrt(np.diag(np.linalg.inv(information)))
        except np.linalg.LinAlgError:
            standard_errors = np.full(X1.shape[1], np.inf)
    trouble = _trouble(optimum, standard_errors)
    if trouble is None:
        converged, iterations = True, optimum.iterations
    else:
        coefficients, standard_errors, iterations = _ridge_fallback(X1, s, f)
        eta = X1 @ coefficients
        converged = False
        warnings.warn(
            f"logistic fit on {', '.join(names) or 'the intercept alone'}: {trouble}; "
            f"returning a ridge-penalised fit (strength {_FALLBACK_RIDGE:g} per unit weight on "
            "standardised columns) whose standard errors are approximate",
            stacklevel=stacklevel,
        )
    z_values = coefficients / standard_errors
    return LogisticFit(
        names=("intercept", *names),
        coefficients=coefficients,
        standard_errors=standard_errors,
        z_values=z_values,
        p_values=2.0 * special.ndtr(-np.abs(z_values)),
        log_likelihood=_log_likelihood(eta, s, f),
        converged=converged,
        iterations=iterations,
    )


def fit_logistic_fast(X, successes, failures, start=None) -> tuple[np.ndarray, np.ndarray]:
    """Maximum-likelihood logistic fit by Newton's method, without the statistics table.

    Same optimum as :func:`fit_logistic` (to about 1e-10) at a fraction of the cost; meant for
    the many refits of forward selection.

    Parameters
    ----------
    X : array_like of shape (n, k)
        Design without the intercept column.
    successes, failures : array_like of shape (n,)
        Non-negative weights of successes and failures on each row.
    start : array_like of shape (k + 1,), optional
        Starting coefficients, intercept first. By default the intercept-only optimum.

    Returns
    -------
    coefficients : ndarray of shape (k + 1,)
        Intercept first.
    information_matrix : ndarray of shape (k + 1, k + 1)
        Fisher information ``X1' W X1`` at the optimum, ``X1`` being the design with intercept.

    Warns
    -----
    UserWarning
        When Newton's method does not converge (as under separation); the last iterate is
        returned.

    Examples
    --------
    >>> coefficients, information = fit_logistic_fast([[0.0], [1.0]], [1, 3], [3, 1])
    >>> np.round(coefficients, 4)
    array([-1.0986,  2.1972])
    """
    X1, s, f = _prepare(X, successes, failures)
    fitted = newton_fit(X1, s, f, _start(start, X1.shape[1]))
    return fitted.coefficients, information_at(X1, s + f, fitted.eta)


def penalised_fit(X, successes, failures, penalty: float) -> np.ndarray:
    """Coefficients (intercept first) maximising the log-likelihood minus ``penalty * |b|^2 / 2``.

    The intercept is not penalised. Any penalty above zero gives a finite optimum even when a
    column separates the outcome, as scikit-learn's default regression does (``C = 1 /
    penalty``); the benchmark beside the card uses it.

    Examples
    --------
    >>> np.round(penalised_fit([[0.0], [1.0]], [1, 3], [3, 1], 0.0), 4)
    array([-1.0986,  2.1972])
    """
    X1, s, f = _prepare(X, successes, failures)
    weights = np.full(X1.shape[1], float(penalty))
    weights[0] = 0.0
    return _newton(X1, s, f, None, weights).coefficients


def newton_fit(X1, s, f, start=None, tolerance=_STEP_TOLERANCE, *, at_start=None,
               wide=None) -> NewtonResult:
    """The unchecked core of :func:`fit_logistic_fast`, for designs prepared once.

    ``X1`` holds the intercept column and only rows of positive weight. Returns the
    coefficients, the information matrix of the last full Newton step (close to the one at the
    optimum), the log-likelihood and the linear predictor at the optimum.

    ``at_start``, when given, is what the caller already holds at ``start``
    (:class:`RowSums`; forward selection's score test holds it all): its information matrix
    spares the first Newton step a weighted cross product, and with its gradient too the
    first pass over the rows is not made at all. ``wide``, when given, is a design whose
    leading columns are ``X1``: the last pass, at the optimum, then sums over all of its
    columns, which is all that a score test of the others needs (``NewtonResult.wide``).
    """
    optimum = _newton(X1, s, f, start, np.zeros(X1.shape[1]), tolerance, at_start, wide)
    if not optimum.converged:
        warnings.warn(
            f"fast logistic fit did not converge after {optimum.iterations} iterations "
            "(the data may be separated); returning the last iterate",
            stacklevel=3,
        )
    last = optimum.last
    log_likelihood = last.log_likelihood
    if log_likelihood is None:
        log_likelihood = _log_likelihood(last.eta, s, f)
    return NewtonResult(optimum.coefficients, optimum.hessian, log_likelihood, last.eta,
                        last if wide is not None and optimum.converged else None)


def score_test(X_in, X_candidates, successes, failures, coefficients):
    """Rao score test for adding each candidate column, alone, to a fitted model.

    Parameters
    ----------
    X_in : array_like of shape (n, k)
        Design of the fitted model, without the intercept column. ``k`` may be 0.
    X_candidates : array_like of shape (n, m)
        Candidate columns, each tested on its own.
    successes, failures : array_like of shape (n,)
        Non-negative weights of successes and failures on each row.
    coefficients : array_like of shape (k + 1,)
        Maximum-likelihood coefficients of the model on ``X_in``, intercept first.

    Returns
    -------
    statistics : ndarray of shape (m,)
        Score statistics, chi-square with one degree of freedom under the null.
    p_values : ndarray of shape (m,)
        A candidate that lies in the span of the intercept and ``X_in`` adds nothing: its
        statistic is 0 and its p-value 1.

    Examples
    --------
    >>> s, f = [1, 3, 2], [3, 1, 2]
    >>> b, _ = fit_logistic_fast(np.empty((3, 0)), s, f)
    >>> statistics, p_values = score_test(np.empty((3, 0)), [[0.0], [1.0], [0.5]], s, f, b)
    >>> np.round(statistics, 4)
    array([2.])
    """
    X_in = as_design(X_in, "X_in")
    Z = as_design(X_candidates, "X_candidates")
    if Z.shape[0] != X_in.shape[0]:
        raise InputError(f"X_candidates: expected {X_in.shape[0]} rows like X_in, got {Z.shape[0]}")
    # Preparing both together drops the same zero-weight rows from each.
    X1, s, f = _prepare(np.column_stack([X_in, Z]), successes, failures)
    X1, Z = X1[:, : X_in.shape[1] + 1], X1[:, X_in.shape[1] + 1 :]
    coefficients = np.asarray(coefficients, dtype=float)
    if coefficients.shape != (X1.shape[1],):
        raise InputError(
            f"coefficients: expected {X1.shape[1]} values (intercept first), "
            f"got shape {coefficients.shape}"
        )
    return score_statistics(X1, Z, s, f, coefficients)


def score_statistics(X1, Z, s, f, coefficients):
    """Score statistics and p-values for candidates ``Z`` given a model fitted on ``X1``.

    The unchecked core of :func:`score_test`: ``X1`` already holds the intercept column and
    only rows of positive weight.
    """
    eta = X1 @ coefficients
    p = special.expit(eta)
    weight = (s + f) * p * special.expit(-eta)
    weighted = X1 * weight[:, None]
    return score_statistics_from_sums(Z.T @ (s - (s + f) * p), (Z * Z).T @ weight,
                                      weighted.T @ Z, weighted.T @ X1)


def sums_at(X1, s, f, eta) -> tuple[np.ndarray, np.ndarray]:
    """The score ``X1' (s - n p)`` and information ``X1' diag(n p (1 - p)) X1`` of every column
    at the linear predictor ``eta``, in one pass over the rows: all that score tests of columns
    against a model fitted on others need (see :func:`score_statistics_from_sums`)."""
    sums = _sweep(X1, s, s + f, eta=eta, information=True)
    return sums.gradient, sums.information


def score_statistics_from_sums(score, own, cross, information):
    """Score statistics and p-values of candidates from the sums over rows that they need.

    With ``w = n p (1 - p)`` at the fitted model: ``score`` is ``Z' (s - n p)``, ``own`` is
    ``(Z * Z)' w``, ``cross`` is ``X1' diag(w) Z`` and ``information`` is ``X1' diag(w) X1``.
    Sums of this kind can be accumulated over blocks of rows, or over grouped counts.
    """
    try:
        projected = np.linalg.solve(information, cross)
    except np.linalg.LinAlgError:
        # A model that separates the outcomes leaves every weight at zero; least squares then
        # projects out nothing and the tests below find no candidate informative.
        projected = np.linalg.lstsq(information, cross, rcond=None)[0]
    variance = own - np.einsum("ij,ij->j", cross, projected)
    # What is left of a candidate after projecting out the model can be rounding noise only.
    informative = variance > 1e-10 * np.maximum(own, np.finfo(float).tiny)
    statistics = np.where(informative, score**2 / np.where(informative, variance, 1.0), 0.0)
    return statistics, special.chdtrc(1, statistics)


def log_likelihood(X, successes, failures, coefficients) -> float:
    """Binomial log-likelihood kernel of a logistic model, in nats.

    ``sum(successes * log p + failures * log(1 - p))``, leaving out the binomial coefficients.

    Parameters
    ----------
    X : array_like of shape (n, k)
        Design without the intercept column.
    successes, failures : array_like of shape (n,)
        Non-negative weights of successes and failures on each row.
    coefficients : array_like of shape (k + 1,)
        Intercept first.

    Returns
    -------
    float

    Examples
    --------
    >>> round(log_likelihood(np.empty((2, 0)), [1, 1], [1, 1], [0.0]), 4)
    -2.7726
    """
    X1, s, f = _prepare(X, successes, failures)
    coefficients = np.asarray(coefficients, dtype=float)
    if coefficients.shape != (X1.shape[1],):
        raise InputError(
            f"coefficients: expected {X1.shape[1]} values (intercept first), "
            f"got shape {coefficients.shape}"
        )
    return _log_likelihood(X1 @ coefficients, s, f)


def as_design(X, label: str) -> np.ndarray:
    """``X`` as a finite 2-d float array; InputError naming the first bad cell."""
    X = np.asarray(X, dtype=float)
    if X.ndim != 2:
        raise InputError(f"{label}: expected a 2-D array (rows, columns), got {X.ndim} dimensions")
    bad = ~np.isfinite(X)
    if bad.any():
        row, column = np.argwhere(bad)[0]
        raise InputError(f"{label}: value at row {row}, column {column} is not finite")
    return X


def as_weights(values, label: str, n: int) -> np.ndarray:
    """``values`` as n finite non-negative floats; InputError naming the first bad row."""
    values = np.asarray(values, dtype=float)
    if values.shape != (n,):
        raise InputError(
            f"{label}: expected shape ({n},) to match the rows of X, got {values.shape}"
        )
    bad = ~np.isfinite(values) | (values < 0)
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        raise InputError(f"{label}: row {row} is {values[row]}, expected a finite value >= 0")
    return values


def _prepare(X, successes, failures) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Validate, drop rows of zero weight and add the intercept column."""
    X = as_design(X, "X")
    s = as_weights(successes, "successes", X.shape[0])
    f = as_weights(failures, "failures", X.shape[0])
    if s.sum() <= 0:
        raise InputError("successes: all zero; a logistic fit needs both successes and failures")
    if f.sum() <= 0:
        raise InputError("failures: all zero; a logistic fit needs both successes and failures")
    used = s + f > 0
    X1 = np.column_stack([np.ones(int(used.sum())), X[used]])
    return X1, s[used], f[used]


def _start(start, k: int) -> np.ndarray | None:
    if start is None:
        return None
    start = np.asarray(start, dtype=float)
    if start.shape != (k,):
        raise InputError(f"start: expected {k} coefficients (intercept first), "
                         f"got shape {start.shape}")
    return start


def _column_names(names, k: int) -> tuple[str, ...]:
    if names is None:
        return tuple(f"x{j + 1}" for j in range(k))
    names = tuple(names)
    if len(names) != k:
        raise InputError(f"names: expected {k} names to match the columns of X, got {len(names)}")
    if not all(isinstance(name, str) and name for name in names):
        raise InputError("names: every name must be a non-empty string")
    repeated = sorted({name for name in names if names.count(name) > 1})
    if repeated or "intercept" in names:
        raise InputError(f"names: {(repeated or ['intercept'])[0]!r} is not a usable unique name")
    return names


def _require_full_rank(X1: np.ndarray, names: tuple[str, ...]) -> None:
    scale = np.maximum(np.maximum(X1.max(axis=0), -X1.min(axis=0)), np.finfo(float).tiny)
    # The eigenvalues of the scaled cross products X'X are the squared singular values of the
    # scaled design, and rounding moves them by about n * eps of the largest. A smallest one
    # a thousand times beyond that is full rank by numpy's matrix_rank rule as well, which is
    # all that most designs need: a k x k eigenproblem, not an SVD of the n x k design. Only a
    # design near that line pays for the SVD, which also names the offending column.
    eigenvalues = np.linalg.eigvalsh(weighted_gram(X1) / np.outer(scale, scale))
    if eigenvalues[0] > 1e3 * max(X1.shape) * np.finfo(float).eps * eigenvalues[-1]:
        return
    scaled = X1 / scale
    if np.linalg.matrix_rank(scaled) == X1.shape[1]:
        return
    for j in range(1, X1.shape[1]):
        if np.linalg.matrix_rank(scaled[:, : j + 1]) <= j:
            raise InputError(
                f"column {names[j - 1]!r} is a linear combination of the intercept and the "
                "columns before it, so its coefficient cannot be estimated"
            )


def _trouble(optimum: _Optimum, standard_errors) -> str | None:
    """Say why a fit cannot be reported as a maximum-likelihood fit, if it can't."""
    if not optimum.converged:
        return (
            f"the maximum-likelihood fit did not converge in {_MAX_ITERATIONS} iterations "
            "(the data are probably separated, so some coefficient runs to infinity)"
        )
    if not (np.all(np.isfinite(optimum.coefficients)) and np.all(np.isfinite(standard_errors))):
        return "the maximum-likelihood fit gave non-finite numbers"
    # Odds beyond e**30 on an observed pattern mean a coefficient has run off to where the
    # weights underflow, which a step-size test can mistake for convergence.
    if np.max(np.abs(optimum.last.eta)) > _SEPARATED_LOG_ODDS:
        return "fitted probabilities of 0 or 1 show that the data are separated"
    return None


def _ridge_fallback(X1, s, f) -> tuple[np.ndarray, np.ndarray, int]:
    share = (s + f) / (s + f).sum()
    spread = np.sqrt(share @ (X1[:, 1:] - share @ X1[:, 1:]) ** 2)
    penalty = np.concatenate([[0.0], _FALLBACK_RIDGE * (s + f).sum() * spread**2])
    optimum = _newton(X1, s, f, None, penalty)
    standard_errors = np.sqrt(np.diag(np.linalg.inv(optimum.hessian + np.diag(penalty))))
    return optimum.coefficients, standard_errors, optimum.iterations


def _log_likelihood(eta, s, f) -> float:
    # s log p + f log(1 - p) = s eta - (s + f) log(1 + e^eta): one transcendental pass, not two.
    # numpy's own sum, not a BLAS dot: threaded BLAS on a 1-d dot stalls on a busy machine.
    return float((s * eta - (s + f) * np.logaddexp(0.0, eta)).sum())


def _newton(X1, s, f, start, penalty, tolerance=_STEP_TOLERANCE, at_start=None,
            wide=None) -> _Optimum:
    """Maximise the log-likelihood minus ``sum(penalty * b**2) / 2`` by damped Newton steps.

    Each iterate is visited by one pass over the rows (:func:`_sweep`) that yields its linear
    predictor and gradient and, while steps are large, its information matrix and
    log-likelihood. ``at_start`` (:class:`RowSums`) holds what the caller knows at ``start``.
    ``wide``, when given, is a design whose leading columns are ``X1``: the pass at the optimum
    then sums over all of its columns (``_Optimum.last``), as a score test of the others needs.
    """
    n = s + f
    k = X1.shape[1]
    if start is None:
        start = np.zeros(k)
        start[0] = np.log(s.sum() / f.sum())
    b = np.asarray(start, dtype=float).copy()
    known = at_start if at_start is not None else RowSums()
    hessian = known.information
    if known.gradient is None or hessian is None:
        here = _sweep(X1, s, n, b, information=hessian is None)
        hessian = here.information if hessian is None else hessian
    else:
        eta = X1 @ b if known.eta is None else known.eta
        here = RowSums(eta, known.gradient, hessian, known.log_likelihood)
    gradient = here.gradient[:k] - penalty * b
    current = None     # the penalised log-likelihood at b, made when a step needs checking
    if known.log_likelihood is not None:
        current = known.log_likelihood - 0.5 * penalty @ b**2
    for iteration in range(1, _MAX_ITERATIONS + 1):
        try:
            step = np.linalg.solve(hessian + np.diag(penalty), gradient)
        except np.linalg.LinAlgError:
            # A full-rank design whose weights have underflowed is separated: report it as
            # non-convergence. A rank-deficient one is the caller's error.
            _require_full_rank(X1, _column_names(None, k - 1))
            break
        scale = 1.0
        # Halving guards the rare overshoot far from the optimum; near it the full step is taken.
        while True:
            candidate = b + scale * step
            size = np.max(np.abs(scale * step))
            checked = size > _CHECKED_STEP * (1.0 + np.max(np.abs(b)))
            size /= 1.0 + np.max(np.abs(candidate))
            last = size <= tolerance
            if checked and current is None:
                current = _log_likelihood(here.eta, s, f) - 0.5 * penalty @ b**2
            # Near the optimum the information matrix barely changes, so the last one is
            # reused: the gradient is exact, so the iterates still converge to the exact
            # optimum, and the pass makes no weighted cross product.
            there = _sweep(X1, s, n, candidate, log_likelihood=checked or last,
                           information=size > _CHECKED_STEP ** 2 or (last and wide is not None),
                           wide=wide if last else None)
            if not checked:
                value = current
                break
            value = there.log_likelihood - 0.5 * penalty @ candidate**2
            if value >= current - 1e-12 * abs(current) or scale <= 1e-10:
                break
            scale /= 2
        b, here, current = candidate, there, value
        if there.information is not None:
            hessian = there.information[:k, :k]
        gradient = there.gradient[:k] - penalty * b
        if last:
            # The information matrix of the last full Newton step: within a step of 1e-4 of
            # the optimum, which is close enough for z-values that only rank coefficients.
            return _Optimum(b, hessian, True, iteration, here)
    return _Optimum(b, hessian, False, iteration, here._replace(log_likelihood=None))


# Rows per block of a pass: a block of a dozen or so columns stays in the cache from its
# linear predictor to its cross product.
_BLOCK_ROWS = 1 << 13


def _sweep(X1, s, n, b=None, *, eta=None, log_likelihood=False, information=False,
           wide=None) -> RowSums:
    """The linear predictor, gradient and, on request, information matrix and log-likelihood
    at coefficients ``b`` (or at the linear predictor ``eta``), in one pass over the rows.

    A block of rows at a time goes from its linear predictor through its fitted probabilities
    to its sums, so nothing row-sized is made but the predictor itself; the information matrix
    comes from the block scaled by the roots of its weights and multiplied by its own transpose
    (a symmetric rank-k update in BLAS). With ``wide``, whose leading columns are ``X1``, the
    gradient and the information matrix span all of its columns.
    """
    design = X1 if wide is None else wide
    rows, k = X1.shape
    m = design.shape[1]
    given = eta is not None
    if not given:
        eta = np.empty(rows)
    gradient, gram, total = np.zeros(m), np.zeros((m, m)) if information else None, 0.0
    size = min(rows, _BLOCK_ROWS)
    p, q, work = np.empty(size), np.empty(size), np.empty(size)
    scaled = np.empty((size, m)) if information else None
    for start in range(0, rows, _BLOCK_ROWS):
        stop = min(start + _BLOCK_ROWS, rows)
        h = stop - start
        block, e, sb, nb = design[start:stop], eta[start:stop], s[start:stop], n[start:stop]
        if not given:
            np.matmul(block[:, :k], b, out=e)
        pb, wb = special.expit(e, out=p[:h]), work[:h]
        np.multiply(nb, pb, out=wb)
        np.subtract(sb, wb, out=wb)
        gradient += block.T @ wb
        if information or log_likelihood:
            qb = special.expit(np.negative(e, out=q[:h]), out=q[:h])
        if log_likelihood:
            # s log p + f log(1 - p) = s eta + n log(1 - p), and 1 - p is at hand; where it
            # underflows (odds past e**700), the slower form that cannot.
            with np.errstate(divide="ignore"):
                part = float((sb * e).sum() + (nb * np.log(qb)).sum())
            if not np.isfinite(part):
                part = float((sb * e - nb * np.logaddexp(0.0, e)).sum())
            total += part
        if information:
            np.multiply(nb, pb, out=wb)
            wb *= qb
            np.sqrt(wb, out=wb)
            part = scaled[:h]
            np.multiply(block, wb[:, None], out=part)
            gram += part.T @ part
    return RowSums(eta, gradient, gram, total if log_likelihood else None)


def information_at(X1, n, eta) -> np.ndarray:
    """Fisher information ``X1' diag(n p (1 - p)) X1`` at the linear predictor ``eta``."""
    return _sweep(X1, n, n, eta=eta, information=True).information


def weighted_gram(X, weights=None) -> np.ndarray:
    """``X' diag(weights) X`` for non-negative weights (all ones by default).

    A block of rows at a time is scaled by the roots of its weights into one small reused
    buffer and multiplied by its own transpose, which BLAS does as a symmetric rank-k update:
    half the arithmetic of a general product, and no temporary the size of ``X``.

    Examples
    --------
    >>> weighted_gram(np.array([[1.0, 2.0], [1.0, -1.0]]), np.array([1.0, 4.0]))
    array([[ 5., -2.],
           [-2.,  8.]])
    """
    n, k = X.shape
    root = None if weights is None else np.sqrt(weights)
    out = np.zeros((k, k))
    buffer = np.empty((min(n, _BLOCK_ROWS), k))
    for start in range(0, n, _BLOCK_ROWS):
        stop = min(start + _BLOCK_ROWS, n)
        block = buffer[: stop - start]
        if root is None:
            block[...] = X[start:stop]
        else:
            np.multiply(X[start:stop], root[start:stop, None], out=block)
        out += block.T @ block
    return out
