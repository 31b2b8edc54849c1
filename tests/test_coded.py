"""Designs held as codes and value tables: blocks, groups and group values against plain numpy."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.fit.design import BLOCK_ROWS, CodedColumns, code_columns


def _random_coded(rows, radix, seed):
    rng = np.random.default_rng(seed)
    codes = np.column_stack([rng.integers(0, r, rows) for r in radix]).astype(np.int16)
    values = [rng.normal(size=r) for r in radix]
    return CodedColumns(codes, values)


def _float_design(coded, columns):
    return np.column_stack([coded.values[j][coded.codes[:, j]] for j in columns])


@pytest.mark.parametrize("rows", [1, BLOCK_ROWS, 2 * BLOCK_ROWS + 5])
def test_blocks_put_together_are_the_float_design(rows):
    coded = _random_coded(rows, [3, 6, 2], seed=rows)
    columns = [2, 0]
    pieces, covered = [], 0
    for start, stop, block in coded.blocks(columns):
        assert start == covered
        covered = stop
        pieces.append(block.copy())   # the block is a reused buffer
    assert covered == rows
    np.testing.assert_array_equal(np.vstack(pieces), _float_design(coded, columns))


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 200), st.lists(st.integers(1, 7), min_size=1, max_size=5),
       st.integers(0, 2**32 - 1), st.data())
def test_groups_and_refinements_equal_a_dictionary_of_code_rows(rows, radix, seed, data):
    coded = _random_coded(rows, radix, seed)
    order = data.draw(st.permutations(range(len(radix))))
    groups = coded.group(order[:1])
    for column in order[1:]:
        groups = coded.refine(groups, column)
    assert groups.columns == tuple(order)
    # Reference: number the distinct code rows by first appearance, row by row.
    seen: dict = {}
    expected = [seen.setdefault(tuple(row), len(seen)) for row in coded.codes[:, list(order)]]
    np.testing.assert_array_equal(groups.index, expected)
    assert groups.count == len(seen)
    np.testing.assert_array_equal(coded.group_values(groups),
                                  _float_design(coded, order)[groups.first].reshape(-1, len(order)))


def test_no_columns_make_one_group():
    coded = _random_coded(5, [3], seed=1)
    groups = coded.group([])
    assert groups.count == 1 and groups.index.tolist() == [0] * 5


def test_code_columns_is_exact_and_column_sums_add_the_weights():
    X = np.array([[0.5, -1.0], [0.25, -1.0], [0.5, 2.0]])
    coded = code_columns(X)
    np.testing.assert_array_equal(_float_design(coded, [0, 1]), X)
    sums = coded.column_sums(np.array([1.0, 2.0, 4.0]))
    assert sums[0].tolist() == [2.0, 5.0] and sums[1].tolist() == [3.0, 4.0]


def test_codes_must_be_integers_with_one_value_table_per_column():
    with pytest.raises(ValueError, match="integer"):
        CodedColumns(np.zeros((2, 1)), [np.zeros(1)])
    with pytest.raises(ValueError, match="value tables"):
        CodedColumns(np.zeros((2, 2), dtype=int), [np.zeros(1)])
