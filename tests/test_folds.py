"""Tests of the held-out gain on folds of the development counts, and of entry by it."""

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import special, stats

from scorecard.errors import InputError
from scorecard.fit.design import CodedColumns
from scorecard.fit.folds import FoldLikelihood
from scorecard.fit.selection import select_characteristics
from scorecard.measures.fold_split import _binomial_quantile, cell_keys, split_counts


@settings(deadline=None, max_examples=40)
@given(st.lists(st.floats(0, 1e4, allow_nan=False).map(lambda v: round(v, 2)), min_size=1,
                max_size=30),
       st.integers(2, 7), st.integers(0, 2**32 - 1))
def test_split_counts_deals_every_count_whole_into_the_folds(counts, folds, seed):
    # Invariant: the parts of a count add up to it, none is negative, whole counts give
    # whole parts (rows are dealt, not divided).
    counts = np.array(counts)
    parts = split_counts(counts, cell_keys(np.arange(len(counts)), seed), folds)
    assert parts.shape == (folds, len(counts))
    np.testing.assert_allclose(parts.sum(axis=0), counts, rtol=0, atol=1e-9)
    assert (parts >= 0).all()
    whole = counts == np.floor(counts)
    assert (parts[:, whole] == np.floor(parts[:, whole])).all()


@settings(deadline=None, max_examples=30)
@given(st.lists(st.integers(0, 12_000), min_size=2, max_size=20), st.integers(0, 2**32 - 1),
       st.data())
def test_a_changed_cell_moves_only_its_own_parts(counts, seed, data):
    # Invariant: a cell's parts depend on its own key and count alone, so changing one cell's
    # count (a few rows moved) or the order of the cells leaves every other cell's parts as
    # they were. Counts run past the row-by-row limit into the binomial chain.
    counts = np.array(counts, dtype=float)
    codes = np.column_stack([np.arange(len(counts)), np.arange(len(counts)) % 3])
    before = split_counts(counts, cell_keys(codes, seed), 5)
    changed = data.draw(st.integers(0, len(counts) - 1))
    counts[changed] += data.draw(st.integers(1, 3))
    order = np.random.default_rng(seed).permutation(len(counts))
    after = np.empty_like(before)
    after[:, order] = split_counts(counts[order], cell_keys(codes[order], seed), 5)
    others = np.arange(len(counts)) != changed
    np.testing.assert_array_equal(after[:, others], before[:, others])
    assert after[:, changed].sum() == counts[changed]


def test_split_counts_deals_rows_evenly():
    # Common practice: rows dealt at random fall about equally into the folds; for 100,000
    # rows in 5 folds each fold's share is 0.2 within 4 binomial standard errors (0.0051).
    counts = np.array([60_000.0, 40_000.0] + [1.0] * 50_000 + [3.0] * 10_000)
    parts = split_counts(counts, cell_keys(np.arange(len(counts)), 1), 5)
    shares = parts.sum(axis=1) / counts.sum()
    assert np.abs(shares - 0.2).max() < 4 * np.sqrt(0.2 * 0.8 / counts.sum())


@pytest.mark.parametrize("rows", [10, 6_000])
def test_a_cell_is_split_as_a_multinomial_draw(rows):
    # Reference library: dealing n rows at random into 5 folds gives each fold a
    # Binomial(n, 1/5) part (scipy.stats.binom), and two folds' parts a covariance of
    # -n/25. Over 4,000 cells of n rows, dealt row by row (10) or by the binomial chain (6,000):
    # a chi-square test of fold 0's parts against the binomial law, and the covariance.
    cells = 4_000
    parts = split_counts(np.full(cells, float(rows)), cell_keys(np.arange(cells), 3), 5)
    law = stats.binom(rows, 0.2)
    edges = np.unique(law.ppf(np.linspace(0, 1, 12)[1:-1]))
    observed = np.bincount(np.searchsorted(edges, parts[0], side="left"),
                           minlength=len(edges) + 1)
    expected = np.diff(np.concatenate([[0.0], law.cdf(edges), [1.0]])) * cells
    assert stats.chisquare(observed, expected).pvalue > 1e-3
    covariance = np.cov(parts[0], parts[1])[0, 1]
    assert covariance == pytest.approx(-rows / 25, rel=0.15)


def test_the_binomial_quantile_equals_scipys():
    # Reference library: scipy.stats.binom.ppf, on random levels and counts.
    rng = np.random.default_rng(0)
    u, n = rng.random(5_000), rng.integers(0, 20_000, 5_000).astype(float)
    for p in (0.2, 0.25, 1 / 3, 0.5):
        np.testing.assert_array_equal(_binomial_quantile(u, n, p), stats.binom.ppf(u, n, p))


def _patterns(seed=0, n=4000):
    """Rows with two binned characteristics (5 and 3 bins) grouped into patterns."""
    rng = np.random.default_rng(seed)
    a, b = rng.integers(5, size=n), rng.integers(3, size=n)
    good = rng.binomial(1, special.expit(1.0 + 0.4 * (a - 2) + 0.5 * (b == 2)))
    frame = pd.DataFrame({"a": a, "b": b, "good": good})
    table = frame.groupby(["a", "b"]).good.agg(["sum", "size"]).reset_index()
    codes = table[["a", "b"]].to_numpy()
    goods = table["sum"].to_numpy(float)
    bads = (table["size"] - table["sum"]).to_numpy(float)
    return codes, goods, bads


def _woe(goods, bads, prior_rows):
    # Written out here, apart from the product: a beta prior of prior_rows pseudo-rows at the
    # overall rate, then the log of the bin's posterior odds over the overall odds.
    total_goods, total_bads = goods.sum(), bads.sum()
    share = prior_rows / (total_goods + total_bads)
    return np.log(((goods + share * total_goods) / total_goods)
                  / ((bads + share * total_bads) / total_bads))


@pytest.mark.parametrize("grouped", [True, False], ids=["on groups", "on the patterns"])
def test_held_out_log_likelihood_equals_a_cross_validation_on_the_rows(monkeypatch, grouped):
    # Reference library: statsmodels' binomial GLM fitted to the rows of each training fold,
    # with every bin's weight of evidence estimated on those rows; the held fold's
    # log-likelihood summed over the folds must equal the counts-only figure. Both ways of
    # fitting a fold give it: on groups of patterns, and on the patterns themselves (as where
    # groups would hardly be fewer), the held-out patterns in the design with no weight.
    if not grouped:
        monkeypatch.setattr("scorecard.fit.folds._UNGROUPED_SHARE", 0.0)
    codes, goods, bads = _patterns()
    coded = CodedColumns(codes, [np.zeros(5), np.zeros(3)])
    folds = FoldLikelihood(coded, goods, bads, prior_rows=20.0, seed=7, folds=4)
    held_goods, held_bads = folds.held
    expected = 0.0
    for fold in range(4):
        train_goods, train_bads = goods - held_goods[fold], bads - held_bads[fold]
        woe = [_woe(np.bincount(codes[:, j], train_goods, r),
                    np.bincount(codes[:, j], train_bads, r), 20.0) for j, r in ((0, 5), (1, 3))]
        design = sm.add_constant(np.column_stack([woe[0][codes[:, 0]], woe[1][codes[:, 1]]]))
        # Rows: each pattern once as goods and once as bads, with its count as frequency.
        rows = np.concatenate([design, design])
        outcome = np.concatenate([np.ones(len(codes)), np.zeros(len(codes))])
        counts = np.concatenate([train_goods, train_bads])
        fit = sm.GLM(outcome, rows, family=sm.families.Binomial(), freq_weights=counts).fit()
        p = fit.predict(design)
        expected += held_goods[fold] @ np.log(p) + held_bads[fold] @ np.log1p(-p)
    assert folds.log_likelihood((0, 1)) == pytest.approx(expected, rel=1e-8)
    assert folds.fold_log_likelihoods((0, 1)).sum() == folds.log_likelihood((0, 1))


def test_held_out_log_likelihood_does_not_depend_on_the_order_of_the_patterns():
    # Invariant: the passes may list patterns in any order; the folds are the same.
    codes, goods, bads = _patterns(seed=3)
    order = np.random.default_rng(5).permutation(len(codes))
    values = [np.zeros(5), np.zeros(3)]
    first = FoldLikelihood(CodedColumns(codes, values), goods, bads, 20.0, seed=11)
    second = FoldLikelihood(CodedColumns(codes[order], values), goods[order], bads[order], 20.0,
                            seed=11)
    for columns in [(), (0,), (0, 1)]:
        assert first.log_likelihood(columns) == pytest.approx(second.log_likelihood(columns),
                                                              rel=1e-12)


def _coded_rows(seed=2, n=6000):
    """Two binned characteristics coded by WoE: ``strong`` and a weaker ``weak``."""
    rng = np.random.default_rng(seed)
    strong, weak = rng.integers(5, size=n), rng.integers(2, size=n)
    good = rng.binomial(1, special.expit(1.2 + 0.5 * (strong - 2) + 0.2 * weak)).astype(float)
    codes = np.column_stack([strong, weak])
    values = [_woe(np.bincount(codes[:, j], good, r), np.bincount(codes[:, j], 1 - good, r), 20.0)
              for j, r in ((0, 5), (1, 2))]
    return CodedColumns(codes, values), good, 1 - good


def test_a_characteristic_with_a_real_effect_enters_by_its_held_out_gain():
    # The weak characteristic's effect is real (0.2 on the log-odds, known by construction):
    # it raises the likelihood of held-out rows, and the log and the reason say so. The score
    # test at a level it cannot meet keeps it out, and then no gain is measured.
    coded, goods, bads = _coded_rows()
    names, iv = ["strong", "weak"], [0.2, 0.01]
    result = select_characteristics(coded, goods, bads, names, iv, entry="gain")
    assert result.selected == ("strong", "weak")
    assert all(step["held_out_gain"] > 0 for step in result.steps)
    assert result.fates["weak"].reason.startswith("entered at step 2 with a held-out "
                                                  "log-likelihood gain of")
    by_score = select_characteristics(coded, goods, bads, names, iv, entry="score",
                                      entry_p_value=1e-12)
    assert by_score.selected == ("strong",)
    assert by_score.steps[0]["held_out_gain"] is None
    assert "held-out" not in by_score.fates["weak"].reason


def test_unrelated_characteristics_rarely_gain_on_held_out_folds():
    # Characteristics unrelated to the outcome by construction, in eight bins, coded by a WoE
    # estimated on the same rows. The score test (one degree of freedom) does not know that
    # the WoE was fitted, so it lets most of them in at the 0.05 level; on held-out folds,
    # with the WoE estimated afresh, few gain. Over 20 seeded cases (measured: 15 and 2).
    by_score = by_gain = 0
    for seed in range(20):
        rng = np.random.default_rng(100 + seed)
        coded, goods, bads = _coded_rows(seed=seed)
        codes = np.column_stack([coded.codes[:, 0], rng.integers(8, size=coded.n_rows)])
        values = [coded.values[0], _woe(np.bincount(codes[:, 1], goods, 8),
                                        np.bincount(codes[:, 1], bads, 8), 20.0)]
        both = CodedColumns(codes, values)
        score_only = select_characteristics(both, goods, bads, ["strong", "unrelated"],
                                            [0.2, 0.01], entry="score")
        by_score += "unrelated" in score_only.selected
        by_gain += FoldLikelihood(both, goods, bads, 20.0, seed=seed).gain((0,), 1) > 0
    assert by_score >= 10
    assert by_gain <= 5


def test_one_fold_and_an_unknown_entry_are_refused():
    coded, goods, bads = _coded_rows()
    with pytest.raises(InputError, match="gain_folds"):
        select_characteristics(coded, goods, bads, ["strong", "weak"], [0.2, 0.01], gain_folds=1)
    with pytest.raises(InputError, match="entry: expected one of 'gain', 'score'"):
        select_characteristics(coded, goods, bads, ["strong", "weak"], [0.2, 0.01], entry="aic")
