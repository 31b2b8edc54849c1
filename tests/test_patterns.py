"""Distinct patterns of bin codes: against a plain dictionary count, in any number of chunks."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.card.scorecard import MISSING, RANGE, Bin, Characteristic
from scorecard.engines import patterns
from scorecard.engines.base import ordered_fold
from scorecard.engines.passes import N_SAMPLES, RowFacts, bin_counts
from scorecard.engines.patterns import Patterns, distinct_patterns, merge_distinct, pattern_index


def _by_dictionary(codes, weights):
    """Distinct rows in order of first appearance and their summed weights, row by row."""
    seen: dict = {}
    for row, w in zip(map(tuple, codes), weights):
        seen[row] = seen.get(row, 0.0) + w
    return [list(r) for r in seen], list(seen.values())


@st.composite
def code_tables(draw, max_rows=60):
    """Code matrices whose radix ranges from 1 to many millions, so packed keys overflow."""
    radix = draw(st.lists(st.sampled_from([1, 2, 3, 7, 40, 1000, 3_000_000]), min_size=1,
                          max_size=9))
    n = draw(st.integers(0, max_rows))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    # Few distinct values per column make repeated rows likely even with a wide radix.
    columns = [rng.integers(0, min(r, draw(st.sampled_from([1, 2, 5]))), n) for r in radix]
    codes = np.column_stack(columns).astype(np.int64) if n else np.zeros((0, len(radix)), np.int64)
    weights = rng.uniform(0.5, 2.0, n).round(2)
    return codes, radix, weights


@settings(max_examples=150, deadline=None)
@given(code_tables())
def test_distinct_patterns_equal_a_dictionary_count(table):
    codes, radix, weights = table
    found = distinct_patterns(codes, radix, [weights])
    rows, sums = _by_dictionary(codes, weights)
    assert found.codes.tolist() == rows
    np.testing.assert_allclose(found.weights[:, 0], sums, rtol=1e-12)


@settings(max_examples=100, deadline=None)
@given(code_tables(max_rows=80), st.integers(1, 30))
def test_merged_chunks_equal_the_whole(table, chunk_rows):
    codes, radix, weights = table
    if not len(codes):
        return
    parts = [distinct_patterns(codes[a:a + chunk_rows], radix, [weights[a:a + chunk_rows]])
             for a in range(0, len(codes), chunk_rows)]
    merged = ordered_fold(lambda a, b: merge_distinct(a, b, radix), parts)
    whole = distinct_patterns(codes, radix, [weights])
    np.testing.assert_array_equal(merged.codes, whole.codes)
    np.testing.assert_allclose(merged.weights, whole.weights, rtol=1e-12)


def test_a_hash_collision_falls_back_to_the_exact_chain(monkeypatch):
    # With a zero multiplier the folded hash keeps only the last key, so rows that differ in
    # the first key collide; the check must notice and count them apart.
    monkeypatch.setattr(patterns, "_MIX", np.uint64(0))
    radix = [3_000_000_000] * 3
    codes = np.array([[1, 0, 5], [2, 0, 5], [1, 0, 5], [2, 1, 5]])
    assert pattern_index(codes, radix).tolist() == [0, 1, 0, 2]
    p = distinct_patterns(codes, radix, [np.array([1.0, 2.0, 3.0, 4.0])])
    assert p.codes.tolist() == [[1, 0, 5], [2, 0, 5], [2, 1, 5]]
    assert p.weights[:, 0].tolist() == [4.0, 2.0, 4.0]


def test_two_keys_are_needed_beyond_62_bits():
    assert len(patterns._packed_keys(np.zeros((2, 3), np.int64), [2**30, 2**30, 2])) == 1
    assert len(patterns._packed_keys(np.zeros((2, 3), np.int64), [2**31, 2**31, 2])) == 2


def test_all_distinct_rows_come_back_uncopied():
    codes = np.arange(12).reshape(6, 2)
    p = distinct_patterns(codes, [12, 12], [np.ones(6)])
    assert p.codes is codes
    assert p.weights.shape == (6, 1) and p.weights.dtype == np.float64


def test_no_rows_and_no_weights():
    p = distinct_patterns(np.zeros((0, 2), np.int16), [2, 2], [np.zeros(0)])
    assert p.codes.shape == (0, 2) and p.weights.shape == (0, 1)
    q = distinct_patterns(np.array([[0, 1], [0, 1]]), [2, 2], [])
    assert q.codes.tolist() == [[0, 1]] and q.weights.shape == (1, 0)


def test_merge_keeps_the_first_table_first():
    a = Patterns(np.array([[1, 1], [0, 0]]), np.array([[1.0], [2.0]]))
    b = Patterns(np.array([[0, 1], [0, 0]]), np.array([[4.0], [8.0]]))
    m = merge_distinct(a, b, [2, 2])
    assert m.codes.tolist() == [[1, 1], [0, 0], [0, 1]]
    assert m.weights[:, 0].tolist() == [1.0, 10.0, 4.0]


@pytest.mark.parametrize("rows", [1, 2**15 - 1, 2**15, 2**15 + 1, 70_000])
def test_row_blocks_do_not_change_the_keys(rows):
    rng = np.random.default_rng(rows)
    codes = rng.integers(0, 6, (rows, 4)).astype(np.int16)
    keys = patterns._packed_keys(codes, [6, 6, 6, 6])
    expected = ((codes[:, 0].astype(np.int64) * 6 + codes[:, 1]) * 6 + codes[:, 2]) * 6 + codes[:, 3]
    np.testing.assert_array_equal(keys[0], expected)


def _numeric_characteristic(cuts):
    edges = (None, *cuts, None)
    bins = tuple(Bin(f"range {i}", RANGE, 1, 1, 0.0, 0, lower=lo, upper=hi)
                 for i, (lo, hi) in enumerate(zip(edges[:-1], edges[1:])))
    return Characteristic("x", "numeric", bins + (Bin("missing", MISSING, 1, 1, 0.0, 0),),
                          0.0, "", "", cuts=tuple(cuts))


@pytest.mark.parametrize("rows", [0, 5, 2**16 + 3])
def test_bin_counts_count_every_row_once_by_bin_sample_and_outcome(rows):
    rng = np.random.default_rng(rows)
    cuts = (2.0, 5.0)
    x = rng.uniform(0, 8, rows).round(1)
    x[rng.random(rows) < 0.1] = np.nan
    facts = RowFacts(rng.integers(0, 2, rows).astype(np.int8), rng.uniform(0.5, 2.0, rows),
                     rng.integers(-1, 3, rows).astype(np.int8))
    table = bin_counts(pd.DataFrame({"x": x}), facts, [_numeric_characteristic(cuts)])[0]
    # Row by row: the bin is the number of cuts at or below the value, missing last.
    expected = np.zeros((len(cuts) + 2, N_SAMPLES, 2))
    for value, label, weight, sample in zip(x, facts.label, facts.weight, facts.sample):
        if sample >= 0:
            b = len(cuts) + 1 if np.isnan(value) else sum(value >= c for c in cuts)
            expected[b, sample, label] += weight
    np.testing.assert_allclose(table, expected, rtol=1e-12, atol=1e-12)
    assert table.sum() == pytest.approx(facts.weight[facts.sample >= 0].sum(), rel=1e-12)


@settings(deadline=None, max_examples=40)
@given(st.integers(1, 6), st.integers(0, 3), st.integers(0, 2**32 - 1))
def test_direct_numbering_equals_numbering_by_hashing(scale, spread_exp, seed):
    # Invariant: with the key range given, keys numbered by direct addressing get the numbers
    # that pandas' hash-based factorize gives (reference library): by first appearance.
    rng = np.random.default_rng(seed)
    span = patterns._DIRECT_SPAN * scale
    n = span * (1 + spread_exp)
    # From a few distinct keys to nearly every value of the range.
    keys = rng.integers(0, rng.integers(1, span + 1), size=n).astype(np.int64)
    direct = patterns.factorize(keys, span)
    assert np.array_equal(direct, pd.factorize(keys)[0])


def test_refining_groups_past_a_limit_counts_them_without_numbering_them():
    from scorecard.fit.design import CodedColumns
    rng = np.random.default_rng(2)
    codes = rng.integers(0, 40, size=(6000, 3))
    coded = CodedColumns(codes, [np.arange(40.0)] * 3)
    groups = coded.group([0])
    exact = coded.refine(groups, 1)
    assert exact.count == len({(a, b) for a, b in codes[:, :2].tolist()})
    limited = coded.refine(groups, 1, at_most=exact.count)
    assert limited.columns == exact.columns and np.array_equal(limited.index, exact.index)
    assert coded.refine(groups, 1, at_most=exact.count - 1) is None
    np.testing.assert_array_equal(exact.index, pd.factorize(codes[:, 0] * 40 + codes[:, 1])[0])
