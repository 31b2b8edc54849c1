"""Tests of weighted correlation, variance inflation and the selection of characteristics."""

import warnings

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import special
from statsmodels.stats.outliers_influence import variance_inflation_factor

from scorecard.errors import InputError
from scorecard.fit.selection import (
    Fate,
    Selection,
    select_characteristics,
    variance_inflation,
    weighted_correlation,
)

STAGES = {
    "information value",
    "correlation",
    "stepwise",
    "coefficient sign",
    "collinearity",
    "kept by config",
    "selected",
}


def woe_code(values, good, bins=5):
    """Quantile bins coded by weight of evidence, with the information value of the binning."""
    edges = np.quantile(values, np.linspace(0, 1, bins + 1)[1:-1])
    code = np.searchsorted(edges, values)
    goods = np.bincount(code, weights=good, minlength=bins)
    bads = np.bincount(code, weights=1 - good, minlength=bins)
    good_share, bad_share = goods / goods.sum(), bads / bads.sum()
    woe = np.log(good_share / bad_share)
    return woe[code], float(((good_share - bad_share) * woe).sum())


@pytest.fixture(scope="module")
def coded():
    """Seeded accounts with five WoE-coded candidates, grouped into patterns.

    ``a`` and ``b`` drive the odds of good; ``a_copy`` is ``a`` plus a little noise; ``noise`` is
    unrelated; ``reversed`` rises with ``a`` so its own WoE is positive, but its effect given
    ``a`` and ``b`` is negative.
    """
    rng = np.random.default_rng(2024)
    n = 20_000
    a, b, z, noise = rng.normal(size=(4, n))
    columns = {
        "a": a,
        "a_copy": a + 0.3 * rng.normal(size=n),
        "b": b,
        "noise": noise,
        "reversed": 0.5 * a + z,
    }
    good = rng.binomial(1, special.expit(1.5 + a + 0.8 * b - 0.15 * columns["reversed"]))
    good = good.astype(float)
    names = list(columns)
    codes, ivs = zip(*(woe_code(columns[name], good) for name in names))
    patterns, inverse = np.unique(np.column_stack(codes), axis=0, return_inverse=True)
    inverse = inverse.ravel()
    return {
        "X": patterns,
        "goods": np.bincount(inverse, weights=good),
        "bads": np.bincount(inverse, weights=1 - good),
        "names": names,
        "iv": dict(zip(names, ivs)),
    }


def select(coded, **settings_):
    return select_characteristics(
        coded["X"], coded["goods"], coded["bads"], coded["names"], coded["iv"], **settings_
    )


def expanded(X, counts):
    return np.repeat(X, counts, axis=0)


# --- Weighted correlation and variance inflation against reference libraries.


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), k=st.integers(1, 5))
def test_weighted_correlation_equals_corrcoef_of_repeated_rows(seed, k):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(40, k)) @ rng.normal(size=(k, k))
    counts = rng.integers(0, 6, size=40)
    counts[:2] = 1
    # reference library: numpy.corrcoef on the rows repeated by their integer weights.
    expected = np.atleast_2d(np.corrcoef(expanded(X, counts), rowvar=False))
    np.testing.assert_allclose(weighted_correlation(X, counts), expected, rtol=1e-9, atol=1e-12)


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), k=st.integers(2, 5))
def test_variance_inflation_equals_statsmodels_on_expanded_rows(seed, k):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(60, k)) @ rng.normal(size=(k, k))
    counts = rng.integers(1, 5, size=60)
    design = sm.add_constant(expanded(X, counts))
    # reference library: statsmodels variance_inflation_factor with a constant column.
    expected = [variance_inflation_factor(design, j + 1) for j in range(k)]
    np.testing.assert_allclose(variance_inflation(X, counts), expected, rtol=1e-7)


def test_variance_inflation_is_the_diagonal_of_the_inverse_correlation():
    rng = np.random.default_rng(1)
    X = rng.normal(size=(200, 4))
    X[:, 3] += X[:, 0] - X[:, 1]
    weights = rng.uniform(0.1, 3.0, size=200)
    inverse = np.linalg.inv(weighted_correlation(X, weights))
    np.testing.assert_allclose(variance_inflation(X, weights), np.diag(inverse), rtol=1e-9)


def test_variance_inflation_of_exactly_collinear_columns_is_infinite():
    rng = np.random.default_rng(2)
    X = rng.normal(size=(50, 3))
    X = np.column_stack([X, X[:, 0] + 2 * X[:, 1]])
    vif = variance_inflation(X, np.ones(50))
    assert np.isinf(vif[[0, 1, 3]]).all()
    assert vif[2] == pytest.approx(1.0, abs=0.3)


def test_a_constant_column_warns_and_is_undefined():
    X = np.column_stack([[1.0, 2.0, 3.0, 4.0], [5.0, 5.0, 5.0, 5.0], [1.0, 0.0, 1.0, 3.0]])
    with pytest.warns(UserWarning, match="constant under the weights.*: flat"):
        correlation = weighted_correlation(X, [1, 1, 2, 1], names=["up", "flat", "other"])
    assert np.isnan(correlation[1]).all() and np.isnan(correlation[:, 1]).all()
    assert correlation[0, 0] == 1.0 and np.isfinite(correlation[0, 2])
    with pytest.warns(UserWarning, match="constant"):
        vif = variance_inflation(X, [1, 1, 2, 1])
    assert np.isinf(vif[1]) and np.isfinite(vif[[0, 2]]).all()


def test_rows_of_zero_weight_do_not_count():
    X = np.array([[0.0, 1.0], [1.0, 3.0], [2.0, 2.0], [100.0, -100.0]])
    np.testing.assert_allclose(
        weighted_correlation(X, [1, 2, 1, 0]), weighted_correlation(X[:3], [1, 2, 1]), rtol=1e-12
    )


# --- Selection on the synthetic WoE-coded example.


def test_every_stage_decides_the_candidate_it_should(coded):
    # The floor is off by default; set, it is the stage that removes the noise column.
    result = select(coded, min_iv=0.02)
    assert isinstance(result, Selection)
    assert set(result.fates) == set(coded["names"])
    assert all(isinstance(fate, Fate) and fate.stage in STAGES for fate in result.fates.values())
    assert result.selected == ("a", "b")
    assert result.fates["noise"] == Fate(
        False, "information value", f"IV {coded['iv']['noise']:.3f} below the floor 0.02"
    )
    copy = result.fates["a_copy"]
    assert (copy.selected, copy.stage) == (False, "correlation")
    assert copy.reason.startswith("correlation 0.9") and copy.reason.endswith(
        "with a, which has the higher IV"
    )
    assert result.fates["reversed"].stage == "coefficient sign"
    assert "is not positive" in result.fates["reversed"].reason
    assert [result.fates[name].stage for name in result.selected] == ["selected", "selected"]


def test_stepwise_log_records_every_entry_in_order(coded):
    result = select(coded)
    assert [step["entered"] for step in result.steps] == ["a", "b", "reversed"]
    assert [step["step"] for step in result.steps] == [1, 2, 3]
    assert all(step["p_value"] < 0.05 for step in result.steps)
    likelihoods = [step["log_likelihood"] for step in result.steps]
    assert likelihoods == sorted(likelihoods)
    # After the sign stage the final model is back to the two-step model.
    assert result.fit.log_likelihood == pytest.approx(likelihoods[1], rel=1e-9)


def test_final_model_satisfies_the_sign_and_collinearity_rules(coded):
    result = select(coded)
    assert result.fit.names == ("intercept", "a", "b")
    assert np.all(result.fit.coefficients[1:] > 0)
    assert set(result.vif) == {"a", "b"}
    assert all(1.0 <= value <= 5.0 for value in result.vif.values())
    assert result.correlation.shape == (5, 5)
    np.testing.assert_allclose(
        result.correlation,
        weighted_correlation(coded["X"], coded["goods"] + coded["bads"]),
        rtol=1e-12,
    )


def test_keep_forces_a_weak_column_in_first(coded):
    result = select(coded, keep=["noise"])
    assert result.selected[0] == "noise"
    assert set(result.selected) == {"noise", "a", "b"}
    assert result.fates["noise"] == Fate(True, "kept by config", "named in keep")


def test_a_kept_column_causes_its_near_copy_to_drop(coded):
    result = select(coded, keep=["a_copy"])
    assert result.fates["a"].stage == "correlation"
    assert result.fates["a"].reason.endswith("with a_copy, which is kept by config")
    assert result.selected[0] == "a_copy"


def test_a_kept_column_with_the_wrong_sign_stays_and_is_warned_about(coded):
    with pytest.warns(UserWarning, match="kept characteristic 'reversed'"):
        result = select(coded, keep=["reversed"])
    assert "reversed" in result.selected
    assert result.fit.coefficients[result.fit.names.index("reversed")] < 0


def test_noise_above_the_floor_does_not_enter(coded):
    result = select(coded, min_iv=0.0, entry="gain")
    fate = result.fates["noise"]
    assert (fate.selected, fate.stage) == (False, "stepwise")
    assert fate.reason.startswith("no held-out log-likelihood gain at the last step")
    by_score = select(coded, min_iv=0.0, entry="score").fates["noise"]
    assert (by_score.selected, by_score.stage) == (False, "stepwise")
    assert "not below the entry level 0.05" in by_score.reason


def test_the_cap_stops_stepwise_entry(coded):
    result = select(coded, max_characteristics=1)
    assert result.selected == ("a",)
    assert result.fates["b"] == Fate(
        False, "stepwise", "not entered: max_characteristics 1 was reached first"
    )


def test_method_all_takes_the_survivors_by_iv(coded):
    # 'all' takes every survivor of the floor and the correlation stage; the floor set here.
    result = select(coded, method="all", min_iv=0.02)
    assert result.steps == ()
    assert result.selected == ("a", "b")
    assert result.fates["reversed"].stage == "coefficient sign"
    capped = select(coded, method="all", max_characteristics=1, min_iv=0.02)
    assert capped.selected == ("a",)
    assert capped.fates["b"].stage == "stepwise"
    assert "beyond max_characteristics 1" in capped.fates["b"].reason


def test_selection_is_deterministic(coded):
    first, second = select(coded), select(coded)
    assert first.selected == second.selected and first.fates == second.fates
    np.testing.assert_array_equal(first.fit.coefficients, second.fit.coefficients)


@pytest.mark.parametrize("settings_", [{}, {"keep": ["noise"]}, {"method": "all"}])
def test_grouped_and_row_designs_select_and_fit_alike(coded, monkeypatch, settings_):
    # Invariant: grouping rows that share codes leaves the likelihood unchanged, so the
    # choice between grouping and fitting on the rows (by the share of distinct patterns)
    # must not change what is selected, nor the fit beyond rounding.
    from scorecard.fit import selection as selection_module

    results = []
    for share in (2.0, 0.0):      # never on the rows; always on the rows
        monkeypatch.setattr(selection_module, "_UNGROUPED_SHARE", share)
        results.append(select(coded, **settings_))
    grouped, rows = results
    assert grouped.selected == rows.selected and grouped.fates == rows.fates
    assert [s["entered"] for s in grouped.steps] == [s["entered"] for s in rows.steps]
    np.testing.assert_allclose([s["p_value"] for s in rows.steps],
                               [s["p_value"] for s in grouped.steps], rtol=1e-7, atol=1e-300)
    np.testing.assert_allclose(rows.fit.coefficients, grouped.fit.coefficients, rtol=1e-9)
    np.testing.assert_allclose(rows.fit.standard_errors, grouped.fit.standard_errors, rtol=1e-8)
    assert rows.fit.log_likelihood == pytest.approx(grouped.fit.log_likelihood, rel=1e-12)


# --- Collinearity stage and ties.


def collinear_example():
    """Four independent columns and one nearly their sum: every pairwise correlation is below
    0.5, yet the sum has VIF about 12 and each part about 3.8."""
    rng = np.random.default_rng(8)
    n = 8_000
    parts = rng.normal(size=(n, 4))
    total = parts.sum(axis=1) / 2 + 0.3 * rng.normal(size=n)
    X = np.column_stack([parts, total])
    trials = np.full(n, 4.0)
    goods = rng.binomial(4, special.expit(0.3 * parts.sum(axis=1) + 0.5 * total)).astype(float)
    return X, goods, trials - goods, ["p1", "p2", "p3", "p4", "total"]


def test_collinearity_stage_removes_the_most_inflated_column():
    X, goods, bads, names = collinear_example()
    vif = variance_inflation(X, goods + bads)
    # By construction 1 / (1 - R**2) = 1.09 / 0.09 for the total and 1.36 / 0.36 for a part.
    assert vif[4] == pytest.approx(1.09 / 0.09, rel=0.1)
    result = select_characteristics(X, goods, bads, names, [0.3, 0.3, 0.3, 0.3, 0.5], method="all")
    assert result.selected == ("p1", "p2", "p3", "p4")
    assert result.fates["total"].stage == "collinearity"
    assert result.fates["total"].reason == f"VIF {vif[4]:.2f} above the ceiling 5"
    assert all(value <= 5.0 for value in result.vif.values())


def test_a_kept_inflated_column_is_never_removed():
    X, goods, bads, names = collinear_example()
    result = select_characteristics(
        X, goods, bads, names, [0.3] * 4 + [0.5], method="all", max_vif=3.0, keep=["total"]
    )
    assert result.selected[0] == "total"
    # With the total kept, every part has VIF about 3.8 > 3; the highest (p3 in this sample)
    # leaves, after which the other parts are near 1.7 and stay.
    removed = [name for name in names if result.fates[name].stage == "collinearity"]
    assert removed == ["p3"]
    assert result.selected == ("total", "p1", "p2", "p4")
    assert all(value <= 3.0 for name, value in result.vif.items() if name != "total")


def test_ties_prefer_the_name_that_sorts_first():
    rng = np.random.default_rng(3)
    x = rng.normal(size=3000)
    goods = rng.binomial(5, special.expit(x)).astype(float)
    X = np.column_stack([x, x])
    pruned = select_characteristics(X, goods, 5 - goods, ["twin_b", "twin_a"], [0.4, 0.4])
    assert pruned.selected == ("twin_a",)
    assert pruned.fates["twin_b"].reason == (
        "correlation 1.00 with twin_a, which has the same IV and comes first by name"
    )
    entered = select_characteristics(
        X, goods, 5 - goods, ["twin_b", "twin_a"], [0.4, 0.4], max_correlation=1.0, entry="gain"
    )
    assert entered.selected == ("twin_a",)
    assert entered.fates["twin_b"] == Fate(
        False, "stepwise", "nothing to add at the last step: the model already spans it (score 0)")
    by_score = select_characteristics(
        X, goods, 5 - goods, ["twin_b", "twin_a"], [0.4, 0.4], max_correlation=1.0, entry="score"
    )
    assert by_score.selected == ("twin_a",)
    assert "p-value 1 at the last step" in by_score.fates["twin_b"].reason
    both = select_characteristics(
        X, goods, 5 - goods, ["twin_b", "twin_a"], [0.4, 0.4], max_correlation=1.0, method="all"
    )
    assert both.selected == ("twin_a",)
    assert both.fates["twin_b"] == Fate(
        False, "collinearity", "an exact linear combination of the other selected characteristics"
    )


def test_nothing_selected_warns_and_fits_the_intercept():
    rng = np.random.default_rng(4)
    X = rng.normal(size=(100, 2))
    goods = rng.binomial(3, 0.7, size=100).astype(float)
    with pytest.warns(UserWarning, match="no characteristic was selected"):
        result = select_characteristics(X, goods, 3 - goods, ["u", "v"], [0.001, 0.002])
    assert result.selected == () and result.fit.names == ("intercept",)
    assert result.vif == {}


# --- Validation.


@pytest.fixture(scope="module")
def small():
    rng = np.random.default_rng(5)
    X = rng.normal(size=(30, 2))
    goods = rng.binomial(4, 0.6, size=30).astype(float)
    return X, goods, 4 - goods


@pytest.mark.parametrize(
    "change, match",
    [
        ({"names": ["a"]}, "names: expected 2 names"),
        ({"names": ["a", "a"]}, "names: 'a'"),
        ({"information_values": [0.1]}, "information_values: expected 2 values"),
        ({"information_values": {"a": 0.1}}, "information_values: no value for 'b'"),
        ({"information_values": [0.1, -0.2]}, "information_values: 'b' has -0.2"),
        ({"keep": ["c"]}, "keep: 'c' is not one of"),
        ({"keep": ["a", "b"], "max_characteristics": 1}, "keep: names 2 characteristics"),
        ({"method": "backward"}, "method: expected one of 'stepwise', 'all'"),
        ({"min_iv": -1}, "min_iv"),
        ({"max_correlation": 0}, "max_correlation"),
        ({"max_vif": 0.5}, "max_vif"),
        ({"entry_p_value": 1.5}, "entry_p_value"),
        ({"max_characteristics": 0}, "max_characteristics"),
        ({"max_characteristics": 2.5}, "max_characteristics"),
    ],
)
def test_bad_settings_raise_input_error_naming_the_key(small, change, match):
    X, goods, bads = small
    arguments = {"names": ["a", "b"], "information_values": [0.1, 0.2], **change}
    names, ivs = arguments.pop("names"), arguments.pop("information_values")
    with pytest.raises(InputError, match=match):
        select_characteristics(X, goods, bads, names, ivs, **arguments)


def test_bad_counts_raise_input_error_naming_the_row(small):
    X, goods, bads = small
    negative = goods.copy()
    negative[7] = -1.0
    with pytest.raises(InputError, match="successes: row 7"):
        select_characteristics(X, negative, bads, ["a", "b"], [0.1, 0.2])
    with pytest.raises(InputError, match=r"failures: expected shape \(30,\)"):
        select_characteristics(X, goods, bads[:5], ["a", "b"], [0.1, 0.2])
    with pytest.raises(InputError, match="weights: row 0"):
        weighted_correlation(X, -np.ones(30))


def test_kept_columns_that_cannot_be_estimated_are_refused(small):
    X, goods, bads = small
    X = np.column_stack([X, 2 * X[:, 0]])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with pytest.raises(InputError, match="keep: .* exact linear combination"):
            select_characteristics(
                X, goods, bads, ["a", "b", "c"], [0.1, 0.2, 0.3], keep=["a", "c"]
            )
