"""Fine classes: the cell lookup against binary search, the grid, and chunk invariance."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from scorecard.binning.fine import (
    EXTREME_GAP,
    ZERO_BUCKET,
    NumericLayout,
    bulk_of,
    candidate_cuts,
    magnitude_counts,
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
    assert merged["g"] == whole["g"]
    assert (merged["x"].low, merged["x"].high) == (whole["x"].low, whole["x"].high)
    np.testing.assert_array_equal(merged["x"].magnitudes, whole["x"].magnitudes)
    assert merged["x"].bulk() == whole["x"].bulk()
    regular = np.where(x == -999.0, np.nan, x)
    assert (whole["x"].low, whole["x"].high) == (np.nanmin(regular), np.nanmax(regular))
    assert whole["x"].magnitudes.sum() == np.isfinite(regular).sum()


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(200, 3000), st.integers(1, 2),
       st.sampled_from([-1.0, 1.0]), st.floats(0, 250), st.booleans())
def test_a_few_extreme_values_are_set_apart_and_leave_the_bulk_grid(seed, n, k, sign, orders,
                                                                   with_zeros):
    # Common practice: a value millions of times beyond the rest is a typing or coding error,
    # not a risk level; the grid of cuts must keep resolving the other values.
    rng = np.random.default_rng(seed)
    bulk = rng.lognormal(rng.uniform(-5, 10), rng.uniform(0.1, 2), n) * rng.choice([-1, 1], n)
    if with_zeros:
        bulk[rng.random(n) < 0.5] = 0.0
    largest = np.abs(bulk).max()
    far = sign * largest * 2.0 ** (EXTREME_GAP + 2 + orders)
    x = np.concatenate([bulk, np.full(k, far)])
    found = bulk_of(magnitude_counts(x), x.min(), x.max())
    alone = bulk_of(magnitude_counts(bulk), bulk.min(), bulk.max())
    # Exactly the added values lie beyond the bounds; the bulk has none to set apart.
    assert ((x < found.below) | (x > found.above)).sum() == k
    assert (alone.below, alone.above) == (-math.inf, math.inf)
    # The grid spans the bulk, to within the power of two that holds its end values.
    assert bulk.min() >= found.low >= min(bulk.min() * 2, bulk.min() / 2)
    assert bulk.max() <= found.high <= max(bulk.max() * 2, bulk.max() / 2)
    inside = candidate_cuts(found.low, found.high)
    assert len(inside) >= len(candidate_cuts(alone.low, alone.high)) // 2


def test_values_only_a_thousand_times_beyond_are_ordinary():
    # A high earner among modest incomes is data, not an error: nothing is set apart.
    x = np.concatenate([np.linspace(1000, 5000, 500), [4e6]])
    assert bulk_of(magnitude_counts(x), x.min(), x.max()).above == math.inf


@settings(max_examples=40, deadline=None)
@given(st.lists(st.one_of(finite, st.just(0.0), st.just(-0.0), st.just(math.nan),
                          st.just(math.inf), st.just(-math.inf)), min_size=1, max_size=300))
def test_magnitude_buckets_agree_with_frexp(values):
    # Reference library: numpy's frexp gives each value's binary exponent another way.
    x = np.array(values)
    finite_x = x[np.isfinite(x)]
    _, exponent = np.frexp(np.abs(finite_x))
    normal = np.abs(finite_x) >= np.finfo(float).tiny
    signed = np.sign(finite_x).astype(int) * (exponent + 1022)
    key = np.where(normal, ZERO_BUCKET + signed, ZERO_BUCKET)
    np.testing.assert_array_equal(magnitude_counts(x), np.bincount(key, minlength=len(
        magnitude_counts(x))))
