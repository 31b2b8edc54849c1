"""Tests of the additivity screen: pairs of characteristics whose joint bins added points miss."""

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import special

from scorecard.evaluation.additivity import additivity_check, notable, pair_departure


def _dummies(codes, levels):
    return [(codes == level).astype(float) for level in range(1, levels)]


def test_the_statistic_equals_statsmodels_score_test_of_the_interaction():
    # Reference library: statsmodels' GLMResults.score_test of the interaction cells added
    # to a logistic model with both characteristics' bins as dummies and one more covariate.
    # The screen holds that covariate at its fitted value instead of refitting it, so the two
    # agree to about 1e-4, not exactly (measured: 91.4017 against 91.4038).
    rng = np.random.default_rng(1)
    n = 30_000
    a, b, other = rng.integers(3, size=n), rng.integers(4, size=n), rng.normal(size=n)
    truth = 0.8 + 0.3 * a - 0.2 * b + 0.5 * other + 0.25 * (a == 2) * (b - 1.5)
    good = (rng.random(n) < special.expit(truth)).astype(float)
    design = np.column_stack([np.ones(n), *_dummies(a, 3), *_dummies(b, 4), other])
    fit = sm.GLM(good, design, family=sm.families.Binomial()).fit()
    cell = a * 4 + b
    interaction = np.column_stack([(cell == c).astype(float) for c in range(12)
                                   if c % 4 and c // 4])
    reference = fit.score_test(exog_extra=interaction)
    p = special.expit(design @ fit.params)
    statistic, df = pair_departure(a, b, (3, 4), good - p, p * (1 - p))
    assert df == reference.k_constraint == 6
    assert statistic == pytest.approx(float(reference.statistic[0]), rel=1e-3)


def _three_characteristics(seed, n=8_000, twist=0.0):
    """Bins of three characteristics; ``twist`` turns b's trend where a is 1 (known truth)."""
    rng = np.random.default_rng(seed)
    a, b, c = rng.integers(2, size=n), rng.integers(5, size=n), rng.integers(3, size=n)
    truth = 1.2 + 0.4 * a - 0.2 * (b - 2) + 0.3 * (c == 1) + twist * a * (b - 2)
    good = (rng.random(n) < special.expit(truth)).astype(float)
    design = np.column_stack([np.ones(n), *_dummies(a, 2), *_dummies(b, 5), *_dummies(c, 3)])
    fitted = design @ sm.Logit(good, design).fit(disp=0).params
    return np.column_stack([a, b, c]), good, fitted


def test_an_additive_truth_is_rarely_flagged():
    # Known truth: the outcome is additive in the three characteristics' bins. The screen's
    # family-wise level is 5%, so over 20 simulated builds at most a few flag a pair
    # (binomial(20, 0.05): 4 or more has probability 0.016).
    flagged = 0
    for seed in range(20):
        codes, good, fitted = _three_characteristics(seed)
        pairs = additivity_check(codes, (2, 5, 3), ("a", "b", "c"), good, 1 - good, fitted)
        assert len(pairs) == 3
        flagged += bool(notable(pairs))
    assert flagged <= 3


def test_a_turning_trend_is_flagged_and_the_split_named():
    # Known truth: b's trend reverses where a is 1. The pair (a, b) comes first, beyond
    # chance, and a segmented card would split on a (two bins against five).
    codes, good, fitted = _three_characteristics(3, twist=0.5)
    pairs = additivity_check(codes, (2, 5, 3), ("a", "b", "c"), good, 1 - good, fitted)
    top = notable(pairs)[0]
    assert (top.first, top.second, top.segment_on) == ("a", "b", "a")
    assert top.df == 4 and top.p_value < 1e-6 and top.gain_per_row > 0


def test_pairs_are_limited_to_those_with_a_card_characteristic_and_order_does_not_matter():
    # Invariant: with ``among``, a pair of two candidates both left out is not screened; the
    # statistics do not depend on the order of the patterns.
    codes, good, fitted = _three_characteristics(5, twist=0.3)
    pairs = additivity_check(codes, (2, 5, 3), ("a", "b", "c"), good, 1 - good, fitted,
                             among=("a",))
    assert {(p.first, p.second) for p in pairs} == {("a", "b"), ("a", "c")}
    order = np.random.default_rng(0).permutation(len(good))
    again = additivity_check(codes[order], (2, 5, 3), ("a", "b", "c"), good[order],
                             1 - good[order], fitted[order], among=("a",))
    for first, second in zip(pairs, again):
        assert first.statistic == pytest.approx(second.statistic, rel=1e-9)


def test_the_demo_build_names_the_pair_it_was_made_with(demo_build):
    # Known truth (the demo's generator, scorecard/demo/applications.py): existing leases
    # add risk for new customers and lower it for existing ones. The screen (of the
    # accepts-only card, since the demo infers the declined applications' outcomes) finds
    # that pair first and names customer as the column to split on.
    top = notable(demo_build.additivity)[0]
    assert {top.first, top.second} == {"existing_leases", "customer"}
    assert top.segment_on == "customer"
