"""Stability indices on counts: hand-worked values, critical value, invariants, build tables."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from scorecard.card.scorecard import MISSING, RANGE, Bin, Characteristic
from scorecard.data.samples import DEVELOPMENT, HOLDOUT, OUT_OF_TIME
from scorecard.evaluation.stability import (
    band_counts,
    band_labels,
    build_stability,
    characteristic_stability,
    score_stability,
)


def _char(points=(10, 30, 20)):
    bins = (Bin("< 1", RANGE, 60, 40, -0.4, points[0], upper=1.0),
            Bin(">= 1", RANGE, 90, 10, 1.0, points[1], lower=1.0),
            Bin("missing", MISSING, 5, 5, 0.0, points[2]))
    return Characteristic("x", "numeric", bins, 1.0, "R01", "x is low", cuts=(1.0,))


def _labels(n):
    return [f"band {i}" for i in range(n)]


counts = st.lists(st.integers(min_value=1, max_value=10_000), min_size=2, max_size=12)


def test_index_worked_by_hand():
    # Definition: shares (.5, .3, .2) -> (.4, .3, .3) give
    # (.4-.5) ln(.4/.5) + 0 + (.3-.2) ln(.3/.2) = 0.0223144 + 0.0405465.
    result = score_stability([50, 30, 20], [40, 30, 30], _labels(3))
    assert result.index == pytest.approx(0.1 * math.log(0.5 / 0.4) + 0.1 * math.log(1.5), rel=1e-12)
    assert result.index == pytest.approx(0.0628609, abs=1e-7)
    assert result.table["Contribution"].tolist() == pytest.approx(
        [0.1 * math.log(1.25), 0.0, 0.1 * math.log(1.5)], rel=1e-12)
    assert result.status == "stable" and result.points_shift is None
    assert list(result.table.columns) == ["Band", "Baseline rows", "Current rows",
                                          "Baseline share", "Current share", "Contribution"]
    assert "added" not in result.table.attrs["note"]


def test_critical_value_is_the_chi_square_percentile_over_both_sizes():
    # Yurdakul 2018 (from memory): under no change, PSI ~ (1/N + 1/M) chi2(B - 1).
    small = score_stability([50, 30, 20], [40, 30, 30], _labels(3))
    assert small.critical_value == pytest.approx((2 / 100) * stats.chi2.ppf(0.95, 2), rel=1e-12)
    assert small.critical_value == pytest.approx(0.1198293, abs=1e-7)
    assert small.beyond_chance is False
    # The same shares from a hundred times the rows: the same index, now beyond chance.
    large = score_stability([5000, 3000, 2000], [4000, 3000, 3000], _labels(3))
    assert large.index == pytest.approx(small.index, rel=1e-12)
    assert large.critical_value == pytest.approx(small.critical_value / 100, rel=1e-12)
    assert large.beyond_chance is True


def test_critical_value_uses_the_given_row_counts_and_only_occupied_bins():
    # Weights 2 per row: the shares are those of the weights, N and M those of the rows.
    result = score_stability([100, 60, 40, 0], [80, 60, 60, 0], _labels(4), sizes=(100, 150),
                             unit="weights")
    assert result.critical_value == pytest.approx((1 / 100 + 1 / 150) * stats.chi2.ppf(0.95, 2),
                                                  rel=1e-12)
    assert result.index == pytest.approx(score_stability([50, 30, 20], [40, 30, 30],
                                                         _labels(3)).index, rel=1e-12)
    assert result.table["Contribution"].iloc[3] == 0.0
    assert "Shares of weights" in result.table.attrs["note"]
    assert "1 bin empty in both samples is left out" in result.table.attrs["note"]


def test_smoothing_only_when_a_bin_is_empty_in_one_sample():
    # Definition with the documented fallback: 0.5 added to every occupied bin of both samples.
    result = score_stability([10, 0, 30], [20, 5, 15], _labels(3))
    b = np.array([10.5, 0.5, 30.5]) / 41.5
    c = np.array([20.5, 5.5, 15.5]) / 41.5
    assert result.index == pytest.approx(float(np.sum((c - b) * np.log(c / b))), rel=1e-12)
    assert "0.5 was added" in result.table.attrs["note"]
    assert result.table["Baseline share"].tolist() == pytest.approx([0.25, 0.0, 0.75])


def test_status_follows_the_cut_offs_and_a_cut_off_reaches_its_status():
    # Common practice: below 0.10 stable, 0.10 to 0.25 watch, 0.25 and above shift.
    base, cur = [50, 30, 20], [40, 30, 30]
    index = score_stability(base, cur, _labels(3)).index
    assert score_stability(base, cur, _labels(3), watch=0.05).status == "watch"
    assert score_stability(base, cur, _labels(3), watch=0.01, shift=0.05).status == "shift"
    assert score_stability(base, cur, _labels(3), watch=index, shift=1.0).status == "watch"
    assert score_stability(base, cur, _labels(3), watch=0.01, shift=index).status == "shift"


def test_one_occupied_bin_cannot_move():
    result = score_stability([0, 7], [0, 3], _labels(2))
    assert result.index == 0.0 and result.critical_value == 0.0 and not result.beyond_chance


@pytest.mark.parametrize("base, cur, labels, message", [
    ([1, 2], [1, 2, 3], 2, "current_counts: expected 2 bins"),
    ([0, 0], [1, 2], 2, "baseline_counts: total is zero"),
    ([1, -1], [1, 2], 2, "non-negative"),
    ([1, np.nan], [1, 2], 2, "finite"),
])
def test_invalid_counts_are_refused(base, cur, labels, message):
    with pytest.raises(ValueError, match=message):
        score_stability(base, cur, _labels(labels))


def test_points_shift_and_table_of_a_characteristic():
    # Definition: shares (.5, .5, 0) -> (.6, .3, .1) with points (10, 30, 20):
    # .1 x 10 - .2 x 30 + .1 x 20 = -3.
    result = characteristic_stability(_char(), [50, 50, 0], [60, 30, 10], watch=0.1, shift=0.25)
    assert result.points_shift == pytest.approx(-3.0, rel=1e-12)
    assert result.name == "x"
    assert list(result.table.columns) == ["Attribute", "Points", "Baseline rows", "Current rows",
                                          "Baseline share", "Current share", "Contribution"]
    assert result.table["Points"].tolist() == [10, 30, 20]
    assert result.table["Attribute"].tolist() == ["< 1", ">= 1", "missing"]
    assert "0.5 was added" in result.table.attrs["note"]


@settings(max_examples=60, deadline=None)
@given(counts)
def test_a_sample_against_itself_is_stable_with_index_zero(values):
    # Definition: every log ratio is ln 1 = 0.
    result = score_stability(values, values, _labels(len(values)))
    assert result.index == 0.0 and result.status == "stable" and not result.beyond_chance


@settings(max_examples=60, deadline=None)
@given(st.data())
def test_index_is_symmetric_non_negative_and_the_sum_of_its_table(data):
    # Definition: (c - b) ln(c / b) is unchanged by swapping b and c, and never negative.
    base = data.draw(counts)
    cur = data.draw(st.lists(st.integers(0, 10_000), min_size=len(base), max_size=len(base))
                     .filter(lambda v: sum(v) > 0))
    forward = score_stability(base, cur, _labels(len(base)))
    backward = score_stability(cur, base, _labels(len(base)))
    assert forward.index == pytest.approx(backward.index, rel=1e-9, abs=1e-15)
    assert forward.index >= 0
    assert forward.table["Contribution"].sum() == pytest.approx(forward.index, rel=1e-9, abs=1e-15)
    assert forward.critical_value == pytest.approx(backward.critical_value, rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(0, 2), min_size=1, max_size=200),
       st.lists(st.integers(0, 2), min_size=1, max_size=200),
       st.tuples(*[st.integers(-50, 80)] * 3))
def test_points_shift_is_the_change_of_the_mean_points(base_rows, cur_rows, points):
    # Definition: sum (c_i - b_i) p_i = mean points now - mean points before.
    base_rows, cur_rows = np.array(base_rows), np.array(cur_rows)
    result = characteristic_stability(_char(points), np.bincount(base_rows, minlength=3),
                                      np.bincount(cur_rows, minlength=3))
    table = np.array(points)
    expected = table[cur_rows].mean() - table[base_rows].mean()
    assert result.points_shift == pytest.approx(expected, abs=1e-9)


def test_band_labels_and_counts():
    from scorecard.evaluation.histograms import ScoreHistogram
    hist = ScoreHistogram(300, np.array([1.0, 2, 3, 4, 5]), np.array([0.0, 1, 0, 1, 0]))
    assert band_labels([300, 302], 304) == ["300 to 301", "302 to 304"]
    assert band_counts(hist, [300, 302]).tolist() == [4.0, 13.0]


def test_build_stability_compares_holdout_and_out_of_time_with_development(demo_build):
    comparisons = demo_build.stability
    reports = {r.name: r for r in demo_build.reports}
    again = build_stability(demo_build.card, demo_build.histograms, demo_build.band_starts,
                            {name: reports[name].sample_counts for name in demo_build.card.names},
                            demo_build.samples.rows, watch=demo_build.config.stability.watch,
                            shift=demo_build.config.stability.shift)
    assert [(r.name, r.index, r.status) for c in again for r in (c.score, *c.characteristics)] \
        == [(r.name, r.index, r.status) for c in comparisons
            for r in (c.score, *c.characteristics)]
    assert [(c.baseline, c.current) for c in comparisons] == [("development", "holdout"),
                                                             ("development", "out of time")]
    rows = demo_build.samples.rows
    starts = demo_build.band_starts
    for comparison, code in zip(comparisons, (HOLDOUT, OUT_OF_TIME)):
        score = comparison.score
        assert score.table["Baseline rows"].sum() == rows["development"]
        assert score.table["Current rows"].sum() == rows[comparison.current]
        assert len(score.table) == len(starts)
        assert score.table["Band"].iloc[0].startswith(f"{starts[0]} to ")
        assert score.table["Band"].iloc[-1].endswith(f" to {demo_build.card.max_score}")
        # Yurdakul 2018 (from memory), with the unweighted rows of the two samples.
        n, m = rows["development"], rows[comparison.current]
        assert score.critical_value == pytest.approx(
            (1 / n + 1 / m) * stats.chi2.ppf(0.95, len(starts) - 1), rel=1e-12)
        assert [c.name for c in comparison.characteristics] == list(demo_build.card.names)
        reports = {r.name: r for r in demo_build.reports}
        for result in comparison.characteristics:
            by_sample = reports[result.name].sample_counts.sum(axis=2)
            assert result.table["Baseline rows"].tolist() == by_sample[:, DEVELOPMENT].tolist()
            assert result.table["Current rows"].tolist() == by_sample[:, code].tolist()
            assert result.table["Points"].tolist() == [
                b.points for b in reports[result.name].characteristic.bins]
        # The holdout is a random split and the demo's out-of-time rows are undrifted.
        assert all(r.status == "stable" for r in (score,) + comparison.characteristics)
