"""Fine classes: the cell lookup against binary search, the grid, and chunk invariance."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from scorecard.binning.fine import (
    NumericLayout,
    candidate_cuts,
    numeric_codes,
    quantile_starts,
    regular_range,
)
from scorecard.data import coding
from scorecard.data.coding import grid_cells
from scorecard.engines.passes import column_summary, merge_summaries

finite = st.floats(allow_nan=False, allow_infinity=False, width=64)
moderate = st.floats(min_value=-1e12, max_value=1e12, allow_nan=False)


def _probes(cuts: np.ndarray, extra) -> np.ndarray:
    """Every cut, its two neighbouring doubles, signed zeros, infinities and some others."""
    with np.errstate(over="ignore"):     # the neighbour of the largest double is infinity
        near = [cuts, np.nextafter(cuts, -np.inf), np.nextafter(cuts, np.inf)]
    fixed = np.array([0.0, -0.0, np.inf, -np.inf, 5e-324, -5e-324, 1e300, -1e300])
    return np.concatenate(near + [fixed, np.asarray(extra, dtype=float)])


@settings(max_examples=200, deadline=None)
@given(st.one_of(moderate, finite), st.one_of(moderate, finite), st.lists(finite, max_size=30))
def test_cells_on_the_round_grid_equal_binary_search(a, b, extra):
    lo, hi = min(a, b), max(a, b)
    cuts = candidate_cuts(lo, hi)
    x = _probes(cuts, extra + [lo, hi, lo / 2 + hi / 2])
    np.testing.assert_array_equal(grid_cells(x, cuts), np.searchsorted(cuts, x, side="right"))


@settings(max_examples=200, deadline=None)
@given(st.lists(finite, min_size=0, max_size=120, unique=True), st.lists(finite, max_size=30))
def test_cells_on_any_sorted_cuts_equal_binary_search(values, extra):
    cuts = np.sort(np.array(values, dtype=float))
    assume(len(np.unique(cuts)) == len(cuts))       # 0.0 and -0.0 are one cut
    x = _probes(cuts, extra)
    np.testing.assert_array_equal(grid_cells(x, cuts), np.searchsorted(cuts, x, side="right"))


def test_both_zeros_count_a_cut_at_zero_beside_a_subnormal_cut():
    # Found by the property test above: -0.0 equals the cut 0.0, whatever its sign bit says.
    cuts = np.sort(np.array([-2.2250738585e-313, 0.0] + [float(i) for i in range(1, 15)]))
    x = np.array([0.0, -0.0, -2.2250738585e-313, -5e-324, 5e-324])
    assert grid_cells(x, cuts).tolist() == [2, 2, 1, 1, 2]


@pytest.mark.parametrize("lo, hi", [(0, 240), (0, 1), (-50, 50), (300, 95_000), (1e6, 1e6 + 1),
                                    (-3e-4, -1e-6), (12.5, 12.75)])
def test_the_bucket_table_serves_typical_grids(lo, hi):
    cuts = candidate_cuts(lo, hi)
    table = coding._bucket_table(cuts)
    assert table is not None and table.steps <= coding._MAX_STEPS
    assert len(table.before) <= coding._MAX_TABLE
    rng = np.random.default_rng(1)
    x = rng.uniform(lo - (hi - lo) * 0.1, hi + (hi - lo) * 0.1, 20_000)
    np.testing.assert_array_equal(grid_cells(x, cuts), np.searchsorted(cuts, x, side="right"))


@settings(max_examples=200, deadline=None)
@given(st.one_of(moderate, finite), st.one_of(moderate, finite))
def test_grid_is_round_sorted_and_inside_the_range(a, b):
    lo, hi = min(a, b), max(a, b)
    cuts = candidate_cuts(lo, hi)
    if hi <= lo:
        assert len(cuts) == 0
        return
    assert np.all(np.diff(cuts) > 0)
    assert np.all(cuts > lo) and np.all(cuts <= hi)
    # Every cut prints in at most 12 significant digits, so its label is a clean number.
    assert all(float(f"{c:.12g}") == c for c in cuts)


def test_grid_for_a_unit_range_has_even_steps_and_two_figure_values():
    cuts = candidate_cuts(0.0, 1.0)
    assert cuts[-1] == 1.0
    assert {0.25, 0.5, 0.002, 0.0012} <= set(cuts.tolist())   # even step 0.002; 1.2e-3 two-figure
    assert 0.0013 in cuts and 0.00131 not in cuts


def test_numeric_codes_put_missing_and_sentinels_in_their_own_codes():
    layout = NumericLayout(np.array([0.0, 10.0, 20.0]), (-999.0, -1.0))
    x = np.array([-5.0, 0.0, 15.0, 20.0, 99.0, np.nan, -999.0, -1.0])
    assert numeric_codes(x, layout).tolist() == [0, 1, 2, 3, 3, 4, 5, 6]
    assert layout.n_codes == 7


def test_regular_range_skips_missing_sentinel_and_infinite_values():
    x = np.array([np.nan, -999.0, 4.0, -np.inf, 2.5, 9.0, np.inf])
    assert regular_range(x, (-999.0,)) == (2.5, 9.0)
    assert regular_range(x, (-999.0,), among=np.array([1, 1, 1, 1, 0, 0, 1], bool)) == (4.0, 4.0)
    lo, hi = regular_range(np.array([np.nan, -999.0]), (-999.0,))
    assert math.isnan(lo) and math.isnan(hi)
    assert all(math.isnan(v) for v in regular_range(np.zeros(0), ()))


def test_quantile_starts_give_equal_shares_and_never_start_on_an_empty_cell():
    counts = np.array([10.0, 0, 10, 10, 0, 0, 10, 10, 10, 10, 10, 10])
    starts = quantile_starts(counts, 4)
    # By hand: running totals 10 10 20 30 30 30 40 50 60 70 80 90 reach the quarters 22.5, 45
    # and 67.5 at cells 3, 7 and 9; each class ends there, and the next starts at the first
    # non-empty cell after it (6, not the empty 4).
    assert starts.tolist() == [0, 6, 8, 10]
    assert np.all(counts[starts] > 0)
    assert quantile_starts(np.zeros(3), 4).tolist() == [0]


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(7, 400))
def test_summaries_merged_over_chunks_give_the_whole_grid(seed, chunk_rows):
    rng = np.random.default_rng(seed)
    n = 1000
    x = rng.lognormal(3, 1.5, n).round(2)
    x[rng.random(n) < 0.1] = np.nan
    x[rng.random(n) < 0.05] = -999.0
    levels = np.array(["a", "b", "c", "d"])[rng.integers(0, 4, n)]
    frame = pd.DataFrame({"x": x, "g": pd.Categorical(levels)})
    kinds, sentinels = {"x": "numeric", "g": "categorical"}, {"x": (-999.0,)}
    whole = column_summary(frame, kinds, sentinels)
    parts = [column_summary(frame.iloc[a:a + chunk_rows], kinds, sentinels)
             for a in range(0, n, chunk_rows)]
    merged = parts[0]
    for part in parts[1:]:
        merged = merge_summaries(merged, part)
    assert merged == whole
    np.testing.assert_array_equal(candidate_cuts(*merged["x"]), candidate_cuts(*whole["x"]))
    assert whole["x"] == (np.nanmin(np.where(x == -999.0, np.nan, x)),
                          np.nanmax(np.where(x == -999.0, np.nan, x)))
