"""Arrow columns read from their buffers agree with pyarrow's own conversion, and scoring codes
an Arrow batch exactly as it codes the same rows in pandas.

The reference is pyarrow's ``to_pandas``/``to_pylist`` (a reference library computing the same
thing another way); the check covers nulls, NaN, sliced arrays (a batch cut from a larger one
starts at a bit offset) and every input type the scoring readers give.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pyarrow as pa
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.card.scoring import bin_codes
from scorecard.data.arrow_columns import float_values, labelled, level_values, numbers
from scorecard.data.coding import categorical_codes, level_codes, missing_values, numeric_values
from scorecard.errors import InputError

NUMBER_TYPES = [pa.int8(), pa.int32(), pa.int64(), pa.uint16(), pa.float32(), pa.float64(),
                pa.bool_()]
LEVELS = ["owner", "tenant", "01", "1", "2.50", "", "parents"]


def _sliced(array: pa.Array, start: int) -> pa.Array:
    return array.slice(min(start, len(array)))


@settings(deadline=None, max_examples=60)
@given(st.sampled_from(NUMBER_TYPES), st.lists(st.one_of(st.none(), st.integers(0, 100)),
                                                max_size=40), st.integers(0, 9))
def test_numbers_read_from_buffers_match_pyarrows_conversion(kind, values, start):
    if pa.types.is_boolean(kind):
        values = [None if v is None else v % 2 == 1 for v in values]
    array = _sliced(pa.array(values, type=kind), start)
    expected = [math.nan if v is None else float(v) for v in array.to_pylist()]
    np.testing.assert_array_equal(float_values(array), np.array(expected, dtype=np.float64))


@settings(deadline=None, max_examples=60)
@given(st.lists(st.one_of(st.none(), st.sampled_from(LEVELS)), max_size=40), st.integers(0, 9),
       st.booleans())
def test_levels_read_from_buffers_match_pandas_categories(values, start, encoded):
    array = pa.array(values, type=pa.string())
    array = _sliced(array.dictionary_encode() if encoded else array, start)
    arrow = level_codes(array)
    reference = level_codes(array.to_pandas())
    as_text = [None if c < 0 else arrow.labels[c] for c in arrow.codes]
    assert as_text == [None if c < 0 else reference.labels[c] for c in reference.codes]
    assert as_text == array.to_pylist()
    assert categorical_codes(array, ["1", "owner"]).tolist() == \
        categorical_codes(array.to_pandas(), ["1", "owner"]).tolist()


def test_nan_and_null_are_both_missing_and_whole_numbers_label_as_integers():
    array = pa.array([1.0, float("nan"), None, 2.5], type=pa.float64())
    labels, codes = level_values(array)
    assert [None if c < 0 else labels[c] for c in codes] == [1.0, None, None, 2.5]
    coded = level_codes(array)
    assert [None if c < 0 else coded.labels[c] for c in coded.codes] == ["1", None, None, "2.5"]
    assert missing_values(array).tolist() == [False, True, True, False]
    assert missing_values(array).tolist() == array.to_pandas().isna().tolist()


def test_a_column_of_text_declared_numeric_gives_the_pandas_message():
    array = pa.array(["3", "none", None])
    with pytest.raises(InputError, match=r"^column deposit: row 2: 'none' is not a number"):
        numeric_values(array, "deposit")


@settings(deadline=None, max_examples=40)
@given(st.lists(st.one_of(st.none(), st.integers(-3, 3)), min_size=1, max_size=30),
       st.lists(st.booleans(), min_size=30, max_size=30))
def test_arrays_built_from_numpy_equal_pyarrows_own(values, mask):
    x = np.array([0 if v is None else v for v in values], dtype=np.int64)
    m = np.array(mask[:len(x)])
    assert numbers(x, m).equals(pa.array(x, mask=m))
    assert numbers(x.astype(np.float64), m).equals(pa.array(x.astype(np.float64), mask=m))
    index = x.astype(np.int32) % 3 - 1 if len(x) else x.astype(np.int32)
    expected = pa.DictionaryArray.from_arrays(pa.array(index, mask=(index < 0) | m),
                                              pa.array(["a", "b"]))
    assert labelled(index, ["a", "b"], m).equals(expected)


def test_scoring_codes_an_arrow_column_as_it_codes_the_pandas_one(demo_build):
    # One bin lookup for both: the demo card's characteristics on the demo's own values.
    card = demo_build.card
    rng = np.random.default_rng(5)
    for char in card.characteristics:
        if char.kind == "numeric":
            values = rng.choice([None, -999.0, 0.0, 1.5, 10.0, 250.0, 1e6], size=300).tolist()
            array = _sliced(pa.array(values, type=pa.float64()), 7)
        else:
            levels = [lv for b in char.bins for lv in b.levels] + ["never seen", None]
            array = _sliced(pa.array(rng.choice(levels, size=300).tolist()).dictionary_encode(),
                            7)
        try:
            expected = bin_codes(char, array.to_pandas())
        except InputError as exc:       # a card without an unseen bin refuses the unseen level
            with pytest.raises(InputError, match=re.escape(str(exc))):
                bin_codes(char, array)
            continue
        got = bin_codes(char, array)
        assert got[0].tolist() == expected[0].tolist() and got[1] == expected[1]
