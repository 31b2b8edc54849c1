"""Tests of the count-array measures in scorecard.measures.information."""

import math
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats
from scipy.stats.contingency import association
from sklearn.metrics import mutual_info_score, roc_auc_score

from scorecard import measures as m

LN2 = math.log(2)


def count_pairs(max_bins=8, max_count=50):
    """Two equal-length integer count vectors, each with a positive total."""
    return st.integers(1, max_bins).flatmap(
        lambda n: st.tuples(
            st.lists(st.integers(0, max_count), min_size=n, max_size=n),
            st.lists(st.integers(0, max_count), min_size=n, max_size=n),
        )
    ).filter(lambda pair: sum(pair[0]) > 0 and sum(pair[1]) > 0)


def tables(max_side=5, max_count=30):
    """A 2-d integer contingency table with a positive total."""
    return st.tuples(st.integers(1, max_side), st.integers(1, max_side)).flatmap(
        lambda shape: st.lists(
            st.integers(0, max_count), min_size=shape[0] * shape[1], max_size=shape[0] * shape[1]
        ).map(lambda cells: np.array(cells, dtype=float).reshape(shape))
    ).filter(lambda table: table.sum() > 0)


def table_from_labels(x, y):
    """Contingency table of two integer label vectors."""
    n_x, n_y = x.max() + 1, y.max() + 1
    return np.bincount(x * n_y + y, minlength=n_x * n_y).reshape(n_x, n_y)


def score_samples(rng, n_goods, n_bads, n_values):
    """Integer scores of goods and bads; goods sit a little higher, ties are frequent."""
    goods = np.clip(rng.normal(0.6 * n_values, n_values / 4, n_goods).astype(int), 0, n_values - 1)
    bads = np.clip(rng.normal(0.4 * n_values, n_values / 4, n_bads).astype(int), 0, n_values - 1)
    return goods, bads


# --- odds -----------------------------------------------------------------------------------


def test_odds_facts():
    # common practice: odds 3:1 means p = 3/4; even odds have log-odds 0.
    assert m.logit(0.75) == pytest.approx(math.log(3), rel=1e-15)
    assert m.logistic(math.log(3)) == pytest.approx(0.75, rel=1e-15)
    assert m.logit(0.5) == 0.0
    assert m.logistic(0.0) == 0.5
    assert list(m.logit(np.array([0.0, 1.0]))) == [-math.inf, math.inf]


def test_logistic_is_stable_at_extremes():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        values = m.logistic(np.array([-1000.0, -40.0, 40.0, 1000.0]))
    assert values[0] == 0.0 and values[-1] == 1.0
    assert values[1] == pytest.approx(math.exp(-40), rel=1e-12)


@settings(max_examples=200, deadline=None)
@given(st.floats(-15, 15))
def test_logistic_inverts_logit(x):
    # definition: logistic is the inverse of logit (beyond |x| = 15, 1 - p has too few digits).
    assert m.logit(m.logistic(x)) == pytest.approx(x, abs=1e-8)


def test_odds_reject_bad_input():
    with pytest.raises(ValueError, match=r"p: .*1\.5"):
        m.logit([0.2, 1.5])
    with pytest.raises(ValueError, match="p:"):
        m.logit(math.nan)
    with pytest.raises(ValueError, match="x:"):
        m.logistic([0.0, math.nan])


# --- entropy --------------------------------------------------------------------------------


def test_entropy_of_fair_coin():
    # common practice: a fair coin carries ln 2 nats = 1 bit.
    assert m.entropy([7, 7]) == pytest.approx(LN2, rel=1e-15)
    assert m.entropy([7, 7]) / LN2 == pytest.approx(1.0, rel=1e-15)


def test_entropy_ignores_zeros_and_certainty_is_zero():
    assert m.entropy([0, 3, 0, 3]) == pytest.approx(LN2, rel=1e-15)
    assert m.entropy([0, 9]) == 0.0


def test_entropy_matches_scipy():
    rng = np.random.default_rng(1)
    for _ in range(20):
        counts = rng.integers(0, 100, size=rng.integers(1, 30)).astype(float)
        counts[0] += 1
        # reference library: scipy.stats.entropy normalises counts and uses nats.
        assert m.entropy(counts) == pytest.approx(stats.entropy(counts), rel=1e-12, abs=1e-15)


@pytest.mark.parametrize(
    "counts, message",
    [
        ([[1, 2]], "1-dimensional"),
        ([], "empty"),
        ([1, math.nan], r"counts\[1\]: must be finite"),
        ([1, -2], r"counts\[1\]: must not be negative"),
        ([0, 0], "total is zero"),
        (["a"], "numbers"),
    ],
)
def test_entropy_rejects_bad_counts(counts, message):
    with pytest.raises(ValueError, match=message):
        m.entropy(counts)


# --- weight of evidence and information value -----------------------------------------------


def test_woe_and_iv_worked_example():
    goods, bads = [10, 30, 60], [20, 20, 10]
    # definition, by hand: G = 100, B = 50, shares of goods .1 .3 .6, shares of bads .4 .4 .2.
    expected_woe = [math.log(0.1 / 0.4), math.log(0.3 / 0.4), math.log(0.6 / 0.2)]
    good_shares, bad_shares = [0.1, 0.3, 0.6], [0.4, 0.4, 0.2]
    expected_iv = sum((g - b) * w for g, b, w in zip(good_shares, bad_shares, expected_woe))
    np.testing.assert_allclose(m.weight_of_evidence(goods, bads), expected_woe, rtol=1e-14)
    result = m.information_value(goods, bads)
    assert result.total == pytest.approx(expected_iv, rel=1e-14)
    assert result.total == pytest.approx(0.8841, abs=1e-4)
    np.testing.assert_allclose(result.woe, expected_woe, rtol=1e-14)
    assert result.per_bin.sum() == pytest.approx(result.total, rel=1e-15)


def test_woe_sign_means_lower_risk():
    woe = m.weight_of_evidence([90, 10], [10, 90])
    assert woe[0] > 0 > woe[1]


def test_woe_smoothing_worked_example():
    # definition, by hand: 0.5 added to every cell gives goods .5 10.5 (G 11), bads 5.5 5.5 (B 11).
    woe = m.weight_of_evidence([0, 10], [5, 5], smoothing=0.5)
    np.testing.assert_allclose(woe, [math.log(0.5 / 5.5), math.log(10.5 / 5.5)], rtol=1e-14)


def test_unsmoothed_woe_is_infinite_without_runtime_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        woe = m.weight_of_evidence([0, 10, 5], [5, 0, 5])
        iv = m.information_value([0, 10, 5], [5, 0, 5])
    assert woe[0] == -math.inf and woe[1] == math.inf
    assert woe[2] == pytest.approx(math.log((5 / 15) / (5 / 10)), rel=1e-14)
    assert iv.total == math.inf and np.all(iv.per_bin[:2] == math.inf)


def test_bin_without_cases_warns_and_adds_nothing():
    with pytest.warns(UserWarning, match=r"bins \[1\] hold no goods and no bads"):
        result = m.information_value([10, 0, 30], [20, 0, 20])
    assert math.isnan(result.woe[1])
    assert result.per_bin[1] == 0.0
    assert result.total == pytest.approx(m.information_value([10, 30], [20, 20]).total, rel=1e-15)


@settings(max_examples=200, deadline=None)
@given(count_pairs(), st.sampled_from([0.0, 0.5, 1.0]))
def test_iv_is_never_negative(pair, smoothing):
    goods, bads = pair
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        result = m.information_value(goods, bads, smoothing=smoothing)
    assert result.total >= 0
    assert np.all(result.per_bin >= 0)


@settings(max_examples=200, deadline=None)
@given(count_pairs())
def test_iv_is_the_two_way_kl_divergence(pair):
    goods, bads = (np.array(side) + 0.5 for side in pair)
    # definition: IV = KL(g || b) + KL(b || g) on the share vectors; scipy.stats.entropy(p, q)
    # is KL(p || q) in nats (reference library).
    kl_sum = stats.entropy(goods, bads) + stats.entropy(bads, goods)
    assert m.information_value(goods, bads).total == pytest.approx(kl_sum, rel=1e-9, abs=1e-12)


def test_woe_rejects_bad_input():
    with pytest.raises(ValueError, match="same length"):
        m.weight_of_evidence([1, 2], [1, 2, 3])
    with pytest.raises(ValueError, match="goods: total is zero"):
        m.weight_of_evidence([0, 0], [1, 2], smoothing=0.5)
    with pytest.raises(ValueError, match="bads: total is zero"):
        m.information_value([1, 2], [0, 0])
    with pytest.raises(ValueError, match="smoothing"):
        m.weight_of_evidence([1, 2], [1, 2], smoothing=-0.5)
    with pytest.raises(ValueError, match=r"bads\[0\]: must be finite"):
        m.weight_of_evidence([1, 2], [math.inf, 2])


@pytest.mark.parametrize(
    "iv, label",
    [
        (0.0, "not predictive"),
        (0.0199, "not predictive"),
        (0.02, "weak"),
        (0.0999, "weak"),
        (0.1, "medium"),
        (0.2999, "medium"),
        (0.3, "strong"),
        (0.5, "strong"),
        (0.5001, "suspiciously strong"),
        (math.inf, "suspiciously strong"),
    ],
)
def test_iv_strength_cut_offs(iv, label):
    # from memory: Siddiqi (2006) cut-offs 0.02 / 0.1 / 0.3; common practice: above 0.5 is suspect.
    assert m.iv_strength(iv) == label


@pytest.mark.parametrize("iv", [-0.01, math.nan, "high"])
def test_iv_strength_rejects_bad_values(iv):
    with pytest.raises(ValueError, match="iv"):
        m.iv_strength(iv)


# --- mutual information ---------------------------------------------------------------------


def test_mutual_information_matches_sklearn():
    rng = np.random.default_rng(2)
    for _ in range(20):
        x = rng.integers(0, 6, size=500)
        y = (x + rng.integers(0, 3, size=500)) % 4
        # reference library: sklearn.metrics.mutual_info_score works in nats from labels.
        expected = mutual_info_score(x, y)
        result = m.mutual_information(table_from_labels(x, y))
        assert result.nats == pytest.approx(expected, rel=1e-10, abs=1e-13)
        assert result.bits == pytest.approx(expected / LN2, rel=1e-10, abs=1e-13)


def test_mutual_information_of_perfect_coin_copy_is_one_bit():
    # common practice: knowing a fair coin tells you its 1 bit.
    assert m.mutual_information([[4, 0], [0, 4]]).bits == pytest.approx(1.0, rel=1e-15)


@settings(max_examples=200, deadline=None)
@given(tables())
def test_mutual_information_is_symmetric_and_non_negative(table):
    forward = m.mutual_information(table)
    assert forward.nats >= 0
    assert forward.nats == pytest.approx(m.mutual_information(table.T).nats, rel=1e-12, abs=1e-14)
    # definition: I(X;Y) = H(X) + H(Y) - H(X,Y) and never exceeds either marginal entropy.
    h_x, h_y = m.entropy(table.sum(axis=1)), m.entropy(table.sum(axis=0))
    h_xy = m.entropy(table.ravel())
    assert forward.nats == pytest.approx(h_x + h_y - h_xy, abs=1e-12)
    assert forward.nats <= min(h_x, h_y) + 1e-12


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.floats(0.1, 100), min_size=1, max_size=6),
    st.lists(st.floats(0.1, 100), min_size=1, max_size=6),
)
def test_mutual_information_of_independent_table_is_zero(rows, columns):
    # definition: an outer-product table has independent margins.
    assert m.mutual_information(np.outer(rows, columns)).nats == pytest.approx(0.0, abs=1e-12)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.integers(0, 4), min_size=1, max_size=60), st.integers(1, 5))
def test_mutual_information_when_outcome_is_function_of_bin(x_labels, n_classes):
    x = np.array(x_labels)
    y = (3 * x + 1) % n_classes
    # common practice: if Y = f(X) then I(X;Y) = H(Y).
    expected = m.entropy(np.bincount(y))
    assert m.mutual_information(table_from_labels(x, y)).nats == pytest.approx(expected, abs=1e-12)


def test_outcome_mutual_information_uses_goods_and_bads_as_columns():
    goods, bads = [30, 10, 5], [5, 10, 40]
    expected = m.mutual_information(np.column_stack([goods, bads]))
    assert m.outcome_mutual_information(goods, bads) == expected
    assert m.outcome_mutual_information([10, 20], [5, 10]).nats == pytest.approx(0.0, abs=1e-15)


def test_mutual_information_rejects_bad_tables():
    with pytest.raises(ValueError, match="2-dimensional"):
        m.mutual_information([1, 2, 3])
    with pytest.raises(ValueError, match=r"table\[1, 0\]: must not be negative"):
        m.mutual_information([[1, 2], [-1, 3]])
    with pytest.raises(ValueError, match="total is zero"):
        m.mutual_information([[0, 0], [0, 0]])
    with pytest.raises(ValueError, match="same length"):
        m.outcome_mutual_information([1, 2], [1])


# --- Cramér's V -----------------------------------------------------------------------------


def test_cramers_v_matches_scipy():
    rng = np.random.default_rng(3)
    for _ in range(30):
        shape = tuple(rng.integers(2, 6, size=2))
        table = rng.integers(1, 40, size=shape)
        # reference library: scipy's association, method="cramer", no correction.
        expected = association(table, method="cramer")
        assert m.cramers_v(table) == pytest.approx(expected, rel=1e-12)


def test_cramers_v_extremes_and_empty_lines():
    assert m.cramers_v([[10, 0], [0, 10]]) == 1.0
    assert m.cramers_v(np.outer([1, 2, 3], [4, 5])) == pytest.approx(0.0, abs=1e-12)
    table = np.array([[5, 9, 2], [7, 1, 6]])
    with_empty = np.array([[5, 0, 9, 2], [0, 0, 0, 0], [7, 0, 1, 6]])
    assert m.cramers_v(with_empty) == m.cramers_v(table)


def test_cramers_v_of_one_column_warns():
    with pytest.warns(UserWarning, match="fewer than two non-empty"):
        assert math.isnan(m.cramers_v([[3, 0], [4, 0]]))


# --- discrimination -------------------------------------------------------------------------


def test_discrimination_matches_reference_libraries_with_ties():
    rng = np.random.default_rng(4)
    for n_values in (3, 10, 60):
        good_scores, bad_scores = score_samples(rng, 700, 300, n_values)
        good_hist = np.bincount(good_scores, minlength=n_values)
        bad_hist = np.bincount(bad_scores, minlength=n_values)
        result = m.discrimination(good_hist, bad_hist)
        # reference library: Mann-Whitney U of goods over bads counts ties as one half.
        u = stats.mannwhitneyu(good_scores, bad_scores).statistic
        assert result.auc == pytest.approx(u / (700 * 300), rel=1e-12)
        # reference library: ROC AUC with goods as the positive class.
        labels = np.r_[np.ones(700), np.zeros(300)]
        all_scores = np.r_[good_scores, bad_scores]
        assert result.auc == pytest.approx(roc_auc_score(labels, all_scores), rel=1e-12)
        assert result.gini == pytest.approx(2 * result.auc - 1, rel=1e-15)
        # reference library: two-sample Kolmogorov-Smirnov statistic.
        ks = stats.ks_2samp(good_scores, bad_scores).statistic
        assert result.ks == pytest.approx(ks, rel=1e-12)


def test_discrimination_worked_example():
    # definition, by hand: goods 0 1 3 and bads 3 1 0 at scores 0 1 2. Good-over-bad pairs:
    # 1 good at score 1 beats 3 bads and ties 1; 3 goods at score 2 beat all 4 bads.
    result = m.discrimination([0, 1, 3], [3, 1, 0])
    assert result.auc == (1 * (3 + 0.5) + 3 * 4) / (4 * 4)
    # cumulative bads .75 1 1 and goods 0 .25 1: the gap .75 is first reached at index 0.
    assert result.ks == 0.75 and result.ks_index == 0


def test_ks_index_is_the_first_maximum():
    result = m.discrimination([0, 1, 0, 1], [1, 0, 1, 0])
    # cumulative bads .5 .5 1 1, goods 0 .5 .5 1: the gap .5 appears at indices 0 and 2.
    assert result.ks == 0.5 and result.ks_index == 0


@settings(max_examples=200, deadline=None)
@given(count_pairs(max_bins=12))
def test_discrimination_swapping_classes_mirrors_auc(pair):
    goods, bads = pair
    forward, backward = m.discrimination(goods, bads), m.discrimination(bads, goods)
    # definition: P(g > b) + P(g < b) + P(tie) = 1, so the two AUCs add to 1 and KS is shared.
    assert forward.auc + backward.auc == pytest.approx(1.0, abs=1e-12)
    assert forward.ks == pytest.approx(backward.ks, abs=1e-15)
    assert 0 <= forward.auc <= 1 and -1 <= forward.gini <= 1 and 0 <= forward.ks <= 1


def test_discrimination_rejects_bad_input():
    with pytest.raises(ValueError, match="good_hist: total is zero"):
        m.discrimination([0, 0], [1, 1])
    with pytest.raises(ValueError, match="same length"):
        m.discrimination([1, 1], [1, 1, 1])


# --- stability index ------------------------------------------------------------------------


def test_stability_index_worked_example():
    # definition, by hand: shares .5 .3 .2 against .4 .3 .3.
    expected = (0.4 - 0.5) * math.log(0.4 / 0.5) + 0.0 + (0.3 - 0.2) * math.log(0.3 / 0.2)
    result = m.stability_index([50, 30, 20], [40, 30, 30])
    assert result.total == pytest.approx(expected, rel=1e-14)
    assert result.contributions[1] == 0.0
    np.testing.assert_allclose(result.baseline_share, [0.5, 0.3, 0.2], rtol=1e-15)
    np.testing.assert_allclose(result.current_share, [0.4, 0.3, 0.3], rtol=1e-15)


def test_stability_smoothing_only_when_a_bin_is_empty():
    full = m.stability_index([50, 30, 20], [40, 30, 30], smoothing=0.5)
    assert full.total == m.stability_index([50, 30, 20], [40, 30, 30], smoothing=0.0).total
    # definition, by hand: an empty bin adds 0.5 to all six cells, totals 21.5 and 21.5.
    result = m.stability_index([10, 0, 10], [5, 5, 10], smoothing=0.5)
    baseline, current = np.array([10.5, 0.5, 10.5]) / 21.5, np.array([5.5, 5.5, 10.5]) / 21.5
    expected = ((current - baseline) * np.log(current / baseline)).sum()
    assert result.total == pytest.approx(expected, rel=1e-14)
    np.testing.assert_allclose(result.baseline_share, baseline, rtol=1e-15)


def test_unsmoothed_stability_index_with_empty_bins():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        one_sided = m.stability_index([10, 0, 10], [5, 5, 10], smoothing=0.0)
        both_empty = m.stability_index([10, 0, 10], [5, 0, 15], smoothing=0.0)
    assert one_sided.total == math.inf
    assert both_empty.contributions[1] == 0.0 and math.isfinite(both_empty.total)


@settings(max_examples=200, deadline=None)
@given(count_pairs(max_bins=10, max_count=1000))
def test_stability_index_invariants(pair):
    baseline, current = pair
    forward = m.stability_index(baseline, current)
    # definition: the index is symmetric, zero against itself, non-negative and, with the default
    # smoothing, never infinite.
    assert forward.total == m.stability_index(current, baseline).total
    assert m.stability_index(baseline, baseline).total == 0.0
    assert forward.total >= 0 and math.isfinite(forward.total)
    assert forward.baseline_share.sum() == pytest.approx(1.0, rel=1e-12)


def test_stability_index_rejects_bad_input():
    with pytest.raises(ValueError, match="current_counts: total is zero"):
        m.stability_index([1, 2], [0, 0])
    with pytest.raises(ValueError, match=r"baseline_counts\[0\]: must not be negative"):
        m.stability_index([-1, 2], [1, 1])
    with pytest.raises(ValueError, match="smoothing"):
        m.stability_index([1, 2], [1, 1], smoothing=math.nan)


def test_stability_critical_value_formula():
    for n, mm, bins in ((1000, 1000, 10), (5000, 800, 4), (123, 456, 2)):
        # reference library: scipy's chi-square quantile; formula from Yurdakul (2018), from memory.
        expected = (1 / n + 1 / mm) * stats.chi2.ppf(0.95, bins - 1)
        assert m.stability_critical_value(n, mm, bins) == pytest.approx(expected, rel=1e-14)
    stricter = m.stability_critical_value(1000, 1000, 10, level=0.99)
    assert stricter > m.stability_critical_value(1000, 1000, 10)


def test_stability_critical_value_holds_its_level_under_no_change():
    rng = np.random.default_rng(20240601)
    shares = np.array([0.05, 0.05, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.15, 0.15])
    n_baseline, n_current, runs = 2000, 1500, 2000
    baselines = rng.multinomial(n_baseline, shares, size=runs)
    currents = rng.multinomial(n_current, shares, size=runs)
    critical = m.stability_critical_value(n_baseline, n_current, shares.size)
    indices = np.array([m.stability_index(b, c).total for b, c in zip(baselines, currents)])
    exceed = np.mean(indices > critical)
    # the 5% level should hold within 3%-7% (binomial s.e. about 0.5% at 2000 runs).
    assert 0.03 <= exceed <= 0.07


@pytest.mark.parametrize(
    "args, message",
    [((0, 10, 5), "n_baseline"), ((10, math.inf, 5), "n_current"), ((10, 10, 1), "n_bins"),
     ((10, 10, 2.0), "n_bins"), ((10, 10, 5, 1.0), "level")],
)
def test_stability_critical_value_rejects_bad_input(args, message):
    with pytest.raises(ValueError, match=message):
        m.stability_critical_value(*args)


@pytest.mark.parametrize(
    "index, status",
    [
        (0.0, "stable"),
        (0.0999, "stable"),
        (0.10, "watch"),
        (0.2499, "watch"),
        (0.25, "shift"),
        (math.inf, "shift"),
    ],
)
def test_stability_status_default_cut_offs(index, status):
    # common practice: below 0.1 stable, 0.1 to 0.25 watch, 0.25 and above a shift.
    assert m.stability_status(index) == status


def test_stability_status_custom_cut_offs_and_bad_input():
    assert m.stability_status(0.05, watch=0.05, shift=0.2) == "watch"
    with pytest.raises(ValueError, match="index"):
        m.stability_status(-0.1)
    with pytest.raises(ValueError, match="watch, shift"):
        m.stability_status(0.1, watch=0.3, shift=0.2)


# --- Hosmer-Lemeshow ------------------------------------------------------------------------


def test_hosmer_lemeshow_against_chi_square():
    observed = np.array([3, 8, 12, 20, 31])
    expected = np.array([4.2, 7.1, 13.5, 18.0, 30.2])
    counts = np.array([100, 100, 100, 100, 100])
    result = m.hosmer_lemeshow(observed, expected, counts)
    # definition: the bads-only form equals Pearson's sum over both bads and goods.
    goods_observed, goods_expected = counts - observed, counts - expected
    pearson = (
        (observed - expected) ** 2 / expected
        + (goods_observed - goods_expected) ** 2 / goods_expected
    ).sum()
    assert result.statistic == pytest.approx(pearson, rel=1e-12)
    assert result.dof == 3
    # reference library: scipy's chi-square survival function.
    assert result.p_value == pytest.approx(stats.chi2.sf(pearson, 3), rel=1e-12)


def test_hosmer_lemeshow_perfect_fit():
    result = m.hosmer_lemeshow([10, 20, 30], [10, 20, 30], [100, 100, 100])
    assert result.statistic == 0.0 and result.p_value == 1.0 and result.dof == 1


@pytest.mark.parametrize(
    "args, message",
    [
        (([1, 2], [1, 2], [10, 10]), "at least 3 groups"),
        (
            ([1, 2, 11], [1, 2, 3], [10, 10, 10]),
            r"observed_bads\[2\]: must not exceed counts\[2\] = 10",
        ),
        (([1, 2, 3], [1, 0, 3], [10, 10, 10]), r"expected_bads\[1\]: must lie strictly between"),
        (([1, 2, 3], [1, 2, 10], [10, 10, 10]), r"expected_bads\[2\]"),
        (([1, 2, 3], [1, 2], [10, 10, 10]), "same length"),
    ],
)
def test_hosmer_lemeshow_rejects_bad_input(args, message):
    with pytest.raises(ValueError, match=message):
        m.hosmer_lemeshow(*args)


# --- weight of evidence shrunk by a beta prior ------------------------------------------------


def test_shrunk_woe_is_the_log_odds_of_the_beta_posterior_mean():
    # Conjugate beta-binomial updating (published: Gelman et al., Bayesian Data Analysis,
    # 3rd ed. 2013, section 2.4), computed by scipy.stats.beta (reference library): a prior
    # Beta(m B / N, m G / N) on a bin's bad rate has the overall rate as its mean; after b bads
    # and g goods the posterior mean is the bin's shrunk rate.
    total_goods, total_bads, prior = 900.0, 100.0, 20.0
    goods, bads = np.array([3.0, 40.0, 500.0, 0.0]), np.array([12.0, 2.0, 30.0, 4.0])
    rate = stats.beta(bads + prior * total_bads / 1000, goods + prior * total_goods / 1000).mean()
    expected = np.log((1 - rate) / rate) - np.log(total_goods / total_bads)
    got = m.information.shrunk_woe(goods, bads, total_goods, total_bads, prior)
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_shrunk_woe_without_a_prior_is_the_raw_weight_of_evidence():
    goods, bads = np.array([10.0, 30.0]), np.array([30.0, 10.0])
    np.testing.assert_allclose(m.information.shrunk_woe(goods, bads, 40.0, 40.0, 0.0),
                               m.weight_of_evidence(goods, bads), rtol=1e-15)


@settings(max_examples=60, deadline=None)
@given(goods=st.integers(0, 2000).map(lambda q: q / 4),
       bads=st.integers(0, 2000).map(lambda q: q / 4), extra_goods=st.floats(1, 5000),
       extra_bads=st.floats(1, 5000), prior=st.floats(0.5, 200))
def test_shrunk_woe_keeps_the_sign_and_never_exceeds_the_raw_value(goods, bads, extra_goods,
                                                                    extra_bads, prior):
    # Invariants of shrinkage toward 0 (common practice): the sign is that of g/G - b/B, the
    # size at most the raw one, and a bin with no rows sits at 0.
    total_goods, total_bads = goods + extra_goods, bads + extra_bads
    shrunk = float(m.information.shrunk_woe(goods, bads, total_goods, total_bads, prior))
    assert math.isfinite(shrunk)
    if goods + bads == 0:
        assert shrunk == pytest.approx(0.0, abs=1e-12)
        return
    raw = float(m.woe_of_shares(goods / total_goods, bads / total_bads))
    assert abs(shrunk) <= abs(raw) + 1e-12
    assert shrunk * raw >= 0


def test_shrunk_woe_is_closer_to_the_truth_for_small_bins_of_modest_effect():
    # Known truth (simulation): bins of 30 rows whose true log-odds lie 0.3 from the overall
    # log-odds; a prior of 20 rows halves the mean squared error of the weight of evidence
    # against the raw estimate with the 0.5 correction.
    rng = np.random.default_rng(13)
    total_goods, total_bads = 8000.0, 2000.0
    truth = -0.3
    rate = 1 / (1 + np.exp(-(np.log(total_bads / total_goods) - truth)))
    bads = rng.binomial(30, rate, size=4000).astype(float)
    goods = 30 - bads
    raw = np.log(((goods + 0.5) / total_goods) / ((bads + 0.5) / total_bads))
    shrunk = m.information.shrunk_woe(goods, bads, total_goods, total_bads, 20.0)
    assert np.mean((shrunk - truth) ** 2) < 0.6 * np.mean((raw - truth) ** 2)
