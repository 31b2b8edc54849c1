"""DeLong's test of two correlated AUCs, on counts per pair of scores.

Checked against an independent row-by-row implementation of the published formula (DeLong,
DeLong & Clarke-Pearson 1988, Biometrics 44:837-845; from memory): the structural components
V10 and V01 from the full matrix of pairwise comparisons, their covariance matrices S10 and
S01, and var(AUC2 - AUC1) = c'S10c/m + c'S01c/n with c = (-1, 1). AUCs are also held to
scikit-learn's roc_auc_score (reference library); the p-values to simulations with known truth.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.metrics import roc_auc_score

from scorecard.measures import paired_auc


def delong_rows(a, b, bad):
    """The published formula on rows: pairwise comparisons of every good with every bad."""
    out = []
    for s in (a, b):
        goods, bads = s[~bad], s[bad]
        psi = (goods[:, None] > bads[None, :]) + 0.5 * (goods[:, None] == bads[None, :])
        out.append((psi.mean(axis=1), psi.mean(axis=0), psi.mean()))
    v10 = np.vstack([o[0] for o in out])
    v01 = np.vstack([o[1] for o in out])
    c = np.array([-1.0, 1.0])
    var = c @ np.cov(v10) @ c / v10.shape[1] + c @ np.cov(v01) @ c / v01.shape[1]
    return out[0][2], out[1][2], np.sqrt(var)


def as_counts(a, b, bad):
    keys, inverse = np.unique(np.column_stack([a, b]), axis=0, return_inverse=True)
    inverse = inverse.ravel()
    goods = np.bincount(inverse, weights=~bad, minlength=len(keys))
    bads = np.bincount(inverse, weights=bad, minlength=len(keys))
    return keys[:, 0], keys[:, 1], goods, bads


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10_000), st.integers(20, 200))
def test_counts_give_the_row_formula(seed, n):
    rng = np.random.default_rng(seed)
    bad = rng.random(n) < 0.3
    if bad.sum() < 2 or (~bad).sum() < 2:
        bad[:2], bad[2:4] = True, False
    a = rng.integers(0, 8, n) - 2 * bad          # coarse scores: many ties
    b = a + rng.integers(-2, 3, n)
    r = paired_auc(*as_counts(a, b, bad))
    auc_a, auc_b, error = delong_rows(a, b, bad)
    assert r.auc_first == pytest.approx(auc_a, abs=1e-12)
    assert r.auc_second == pytest.approx(auc_b, abs=1e-12)
    assert r.standard_error == pytest.approx(error, rel=1e-9, abs=1e-12)
    if len(np.unique(a)) > 1:
        assert r.auc_first == pytest.approx(roc_auc_score(~bad, a), abs=1e-12)


def test_a_card_against_itself_has_no_difference():
    rng = np.random.default_rng(3)
    bad = rng.random(500) < 0.2
    a = rng.normal(size=500) - bad
    r = paired_auc(*as_counts(a, a, bad))
    assert r.difference == 0 and r.standard_error == 0 and np.isnan(r.p_value)


def test_p_values_are_about_uniform_when_both_cards_are_equally_good():
    # Simulation with known truth: two scores of equal strength, independent noise.
    rng = np.random.default_rng(11)
    p_values = []
    for _ in range(300):
        n = 400
        bad = rng.random(n) < 0.25
        risk = rng.normal(size=n) + 1.0 * bad
        a = np.round(-(risk + rng.normal(size=n)) * 10)
        b = np.round(-(risk + rng.normal(size=n)) * 10)
        p_values.append(paired_auc(*as_counts(a, b, bad)).p_value)
    p_values = np.array(p_values)
    # About 5% below 0.05: a binomial(300, 0.05) count lies in [5, 27] with probability > 0.99.
    assert 5 <= (p_values < 0.05).sum() <= 27
    assert 0.4 < np.mean(p_values) < 0.6


def test_a_clearly_better_card_is_found():
    rng = np.random.default_rng(5)
    n = 3000
    bad = rng.random(n) < 0.2
    risk = rng.normal(size=n) + 1.2 * bad
    weak = np.round(-(risk + 2.0 * rng.normal(size=n)) * 10)
    strong = np.round(-(risk + 0.3 * rng.normal(size=n)) * 10)
    r = paired_auc(*as_counts(weak, strong, bad))
    assert r.difference > 0 and r.p_value < 1e-6 and r.ci_low > 0


def test_bad_input_names_the_argument():
    with pytest.raises(ValueError, match="more than one good and one bad"):
        paired_auc([1, 2], [1, 2], [1, 0], [1, 0])
    with pytest.raises(ValueError, match="level"):
        paired_auc([1, 2], [1, 2], [2, 3], [3, 2], level=1.5)
